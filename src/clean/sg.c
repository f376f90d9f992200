/*
 * sg.c: Savitzky-Golay weights by local least squares in t.
 * A. Savitzky and M. J. E. Golay, "Smoothing and differentiation of data by
 * simplified least squares procedures", Anal. Chem. 36:1627-1639 (1964);
 * J. Steinier, Y. Termonia and J. Deltour, "Comments on smoothing and
 * differentiation of data by simplified least square procedure", Anal. Chem.
 * 44:1906-1909 (1972), which corrected the original tables.
 *
 * The weights are computed, not tabulated: fit a polynomial of the given
 * order to the window by least squares and read off its value or derivative
 * at t0.  With even spacing this is exactly the published convolution; with
 * uneven spacing (variable frame rate) it is the same local fit in real time,
 * so no resampling is needed.
 */
#include "clean/sg.h"

#include <math.h>
#include <string.h>

#include "core/linalg.h"

int wl_sg_weights(const double *t, int n, double t0, int order, int deriv, double *w)
{
	int np = order + 1;
	double M[(WL_SG_MAX_ORDER + 1) * (WL_SG_MAX_ORDER + 1)], y[WL_SG_MAX_ORDER + 1];
	double h = 0, fact = 1, scale;
	if (order < 0 || order > WL_SG_MAX_ORDER || deriv < 0 || deriv > order || n <= order)
		return 0;
	for (int i = 0; i < n; i++)
		if (fabs(t[i] - t0) > h)
			h = fabs(t[i] - t0);
	if (!(h > 0))
		return 0;
	/* normal equations in tau = (t - t0) / h, which keeps them well scaled */
	memset(M, 0, sizeof M);
	for (int i = 0; i < n; i++) {
		double tau = (t[i] - t0) / h, pw[2 * WL_SG_MAX_ORDER + 1];
		pw[0] = 1;
		for (int k = 1; k <= 2 * order; k++)
			pw[k] = pw[k - 1] * tau;
		for (int a = 0; a < np; a++)
			for (int b = 0; b < np; b++)
				M[a * np + b] += pw[a + b];
	}
	memset(y, 0, sizeof y);
	y[deriv] = 1;
	if (!wl_solve(M, y, np))
		return 0;
	for (int k = 2; k <= deriv; k++)
		fact *= k;
	scale = fact / pow(h, deriv);
	for (int i = 0; i < n; i++) {
		double tau = (t[i] - t0) / h, pw = 1, s = 0;
		for (int a = 0; a < np; a++) {
			s += y[a] * pw;
			pw *= tau;
		}
		w[i] = s * scale;
	}
	return 1;
}

int wl_sg_coeffs(int window, int order, int deriv, double *w)
{
	double t[WL_SG_MAX_WINDOW];
	int m = window / 2;
	if (window < 1 || window > WL_SG_MAX_WINDOW || window % 2 == 0)
		return 0;
	for (int i = 0; i < window; i++)
		t[i] = i - m;
	return wl_sg_weights(t, window, 0.0, order, deriv, w);
}
