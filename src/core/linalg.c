/* linalg.c: small dense linear algebra (see linalg.h). */
#include "core/linalg.h"

#include <math.h>
#include <string.h>

void wl_mat_mul(const double *a, const double *b, double *c, int n, int m, int p)
{
	for (int i = 0; i < n; i++)
		for (int j = 0; j < p; j++) {
			double s = 0;
			for (int k = 0; k < m; k++)
				s += a[i * m + k] * b[k * p + j];
			c[i * p + j] = s;
		}
}

void wl_mat_transpose(const double *a, double *b, int n, int m)
{
	for (int i = 0; i < n; i++)
		for (int j = 0; j < m; j++)
			b[j * n + i] = a[i * m + j];
}

int wl_solve(double *a, double *b, int n)
{
	double scale = 0;
	for (int i = 0; i < n * n; i++)
		scale = fmax(scale, fabs(a[i]));
	if (scale == 0)
		return 0;
	for (int c = 0; c < n; c++) {
		int piv = c;
		for (int r = c + 1; r < n; r++)
			if (fabs(a[r * n + c]) > fabs(a[piv * n + c]))
				piv = r;
		if (fabs(a[piv * n + c]) <= 1e-14 * scale)
			return 0;
		if (piv != c) {
			for (int k = 0; k < n; k++) {
				double t = a[c * n + k];
				a[c * n + k] = a[piv * n + k];
				a[piv * n + k] = t;
			}
			double t = b[c];
			b[c] = b[piv];
			b[piv] = t;
		}
		for (int r = c + 1; r < n; r++) {
			double f = a[r * n + c] / a[c * n + c];
			if (f == 0)
				continue;
			for (int k = c; k < n; k++)
				a[r * n + k] -= f * a[c * n + k];
			b[r] -= f * b[c];
		}
	}
	for (int r = n - 1; r >= 0; r--) {
		double s = b[r];
		for (int k = r + 1; k < n; k++)
			s -= a[r * n + k] * b[k];
		b[r] = s / a[r * n + r];
	}
	return 1;
}

int wl_invert(const double *a, double *inv, int n)
{
	double work[WL_LA_MAX * WL_LA_MAX], col[WL_LA_MAX];
	if (n > WL_LA_MAX)
		return 0;
	for (int j = 0; j < n; j++) {
		memcpy(work, a, sizeof(double) * (size_t)(n * n));
		for (int i = 0; i < n; i++)
			col[i] = i == j;
		if (!wl_solve(work, col, n))
			return 0;
		for (int i = 0; i < n; i++)
			inv[i * n + j] = col[i];
	}
	return 1;
}

void wl_sym_eig(double *a, int n, double *evals, double *evecs)
{
	for (int i = 0; i < n; i++)
		for (int j = 0; j < n; j++)
			evecs[i * n + j] = i == j;
	for (int sweep = 0; sweep < 100; sweep++) {
		double off = 0, diag = 0;
		for (int p = 0; p < n; p++)
			for (int q = 0; q < n; q++)
				if (p != q)
					off += a[p * n + q] * a[p * n + q];
				else
					diag += a[p * n + q] * a[p * n + q];
		if (off <= 1e-30 * (diag + 1e-300))
			break;
		for (int p = 0; p < n - 1; p++)
			for (int q = p + 1; q < n; q++) {
				double apq = a[p * n + q];
				if (fabs(apq) < 1e-300)
					continue;
				double theta = (a[q * n + q] - a[p * n + p]) / (2 * apq);
				double t = (theta >= 0 ? 1 : -1) / (fabs(theta) + sqrt(theta * theta + 1));
				double c = 1 / sqrt(t * t + 1), s = t * c;
				for (int k = 0; k < n; k++) {
					double akp = a[k * n + p], akq = a[k * n + q];
					a[k * n + p] = c * akp - s * akq;
					a[k * n + q] = s * akp + c * akq;
				}
				for (int k = 0; k < n; k++) {
					double apk = a[p * n + k], aqk = a[q * n + k];
					a[p * n + k] = c * apk - s * aqk;
					a[q * n + k] = s * apk + c * aqk;
				}
				for (int k = 0; k < n; k++) {
					double vkp = evecs[k * n + p], vkq = evecs[k * n + q];
					evecs[k * n + p] = c * vkp - s * vkq;
					evecs[k * n + q] = s * vkp + c * vkq;
				}
			}
	}
	for (int i = 0; i < n; i++)
		evals[i] = a[i * n + i];
	/* sort ascending, carrying the eigenvector columns */
	for (int i = 0; i < n - 1; i++) {
		int m = i;
		for (int j = i + 1; j < n; j++)
			if (evals[j] < evals[m])
				m = j;
		if (m != i) {
			double t = evals[i];
			evals[i] = evals[m];
			evals[m] = t;
			for (int k = 0; k < n; k++) {
				t = evecs[k * n + i];
				evecs[k * n + i] = evecs[k * n + m];
				evecs[k * n + m] = t;
			}
		}
	}
}

double wl_det3(const double m[9])
{
	return m[0] * (m[4] * m[8] - m[5] * m[7]) - m[1] * (m[3] * m[8] - m[5] * m[6]) +
	       m[2] * (m[3] * m[7] - m[4] * m[6]);
}

int wl_inv3(const double m[9], double o[9])
{
	double d = wl_det3(m);
	if (d == 0 || !isfinite(d))
		return 0;
	o[0] = (m[4] * m[8] - m[5] * m[7]) / d;
	o[1] = (m[2] * m[7] - m[1] * m[8]) / d;
	o[2] = (m[1] * m[5] - m[2] * m[4]) / d;
	o[3] = (m[5] * m[6] - m[3] * m[8]) / d;
	o[4] = (m[0] * m[8] - m[2] * m[6]) / d;
	o[5] = (m[2] * m[3] - m[0] * m[5]) / d;
	o[6] = (m[3] * m[7] - m[4] * m[6]) / d;
	o[7] = (m[1] * m[6] - m[0] * m[7]) / d;
	o[8] = (m[0] * m[4] - m[1] * m[3]) / d;
	return 1;
}

void wl_mul3(const double a[9], const double b[9], double out[9])
{
	wl_mat_mul(a, b, out, 3, 3, 3);
}

void wl_mul3v(const double m[9], const double v[3], double out[3])
{
	for (int i = 0; i < 3; i++)
		out[i] = m[i * 3] * v[0] + m[i * 3 + 1] * v[1] + m[i * 3 + 2] * v[2];
}
