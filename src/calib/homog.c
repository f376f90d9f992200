/*
 * homog.c: plane-to-image homographies for calibration: the normalised DLT
 * of Hartley (1997) (Hartley & Zisserman, Multiple View Geometry, 2nd ed.,
 * Algorithm 4.2), Levenberg-Marquardt refinement of the transfer error,
 * degeneracy checks, and Rodrigues rotation vectors.  Pure maths.
 */
#include "calib/calib.h"

#include <math.h>
#include <string.h>

#include "core/linalg.h"

int wl_homography_apply(const double H[9], double x, double y, double *u, double *v)
{
	double w = H[6] * x + H[7] * y + H[8];
	if (fabs(w) < 1e-300)
		return 0;
	*u = (H[0] * x + H[1] * y + H[2]) / w;
	*v = (H[3] * x + H[4] * y + H[5]) / w;
	return 1;
}

/* Similarity T that moves the centroid to 0 and the mean distance to √2. */
static int normaliser(const double *p, int n, double T[9])
{
	double cx = 0, cy = 0, d = 0, s;
	for (int i = 0; i < n; i++) {
		cx += p[2 * i];
		cy += p[2 * i + 1];
	}
	cx /= n;
	cy /= n;
	for (int i = 0; i < n; i++)
		d += hypot(p[2 * i] - cx, p[2 * i + 1] - cy);
	d /= n;
	if (!(d > 0) || !isfinite(d))
		return 0;
	s = sqrt(2.0) / d;
	memset(T, 0, 9 * sizeof *T);
	T[0] = T[4] = s;
	T[2] = -s * cx;
	T[5] = -s * cy;
	T[8] = 1;
	return 1;
}

static void apply_T(const double T[9], double x, double y, double *u, double *v)
{
	*u = T[0] * x + T[2];
	*v = T[4] * y + T[5];
}

static double spread(const double *p, int n)
{
	double cx = 0, cy = 0, s = 0;
	for (int i = 0; i < n; i++) {
		cx += p[2 * i] / n;
		cy += p[2 * i + 1] / n;
	}
	for (int i = 0; i < n; i++)
		s += (p[2 * i] - cx) * (p[2 * i] - cx) + (p[2 * i + 1] - cy) * (p[2 * i + 1] - cy);
	return sqrt(s / n);
}

/* Distance of c from the line through a and b (or from a when a == b). */
static double line_dist(const double *a, const double *b, const double *c)
{
	double dx = b[0] - a[0], dy = b[1] - a[1], L = hypot(dx, dy);
	if (L == 0)
		return hypot(c[0] - a[0], c[1] - a[1]);
	return fabs(dx * (c[1] - a[1]) - dy * (c[0] - a[0])) / L;
}

int wl_points_collinear_triple(const double *pts, int n, int ijk[3])
{
	double tol = 0.01 * spread(pts, n);
	for (int i = 0; i < n; i++)
		for (int j = i + 1; j < n; j++)
			for (int k = j + 1; k < n; k++) {
				const double *a = pts + 2 * i, *b = pts + 2 * j, *c = pts + 2 * k;
				/* the height over the longest side */
				double h = fmin(line_dist(a, b, c),
				                fmin(line_dist(b, c, a), line_dist(c, a, b)));
				if (h <= tol) {
					ijk[0] = i;
					ijk[1] = j;
					ijk[2] = k;
					return 1;
				}
			}
	return 0;
}

wl_status wl_homography_check_points(const double *pts, int n, const char *what, wl_err *err)
{
	int ijk[3], a = 0, b = 0, c = -1, d = -1;
	double best = -1, tol;
	if (n < 4)
		return wl_err_set(err, WL_ECALIB, "%s: %d point%s, a homography needs at least 4: add points",
		                  what, n, n == 1 ? "" : "s");
	tol = 0.01 * spread(pts, n);
	if (!(tol > 0))
		return wl_err_set(err, WL_ECALIB, "%s: all points coincide: check the coordinates", what);
	if (n == 4) {
		if (wl_points_collinear_triple(pts, n, ijk))
			return wl_err_set(
			        err, WL_ECALIB,
			        "%s: points %d, %d and %d are collinear, so four points do not fix a "
			        "homography: move one or add points",
			        what, ijk[0] + 1, ijk[1] + 1, ijk[2] + 1);
		return WL_OK;
	}
	/* greedy search for four points in general position: the farthest
	 * pair, the point farthest from their line, then the point farthest
	 * from all three sides */
	for (int i = 0; i < n; i++)
		for (int j = i + 1; j < n; j++) {
			double L = hypot(pts[2 * i] - pts[2 * j], pts[2 * i + 1] - pts[2 * j + 1]);
			if (L > best) {
				best = L;
				a = i;
				b = j;
			}
		}
	best = -1;
	for (int i = 0; i < n; i++) {
		double h = line_dist(pts + 2 * a, pts + 2 * b, pts + 2 * i);
		if (h > best) {
			best = h;
			c = i;
		}
	}
	if (best <= tol)
		return wl_err_set(err, WL_ECALIB,
		                  "%s: all %d points lie on one line: spread them over the floor", what, n);
	best = -1;
	for (int i = 0; i < n; i++) {
		double h = fmin(line_dist(pts + 2 * a, pts + 2 * b, pts + 2 * i),
		                fmin(line_dist(pts + 2 * a, pts + 2 * c, pts + 2 * i),
		                     line_dist(pts + 2 * b, pts + 2 * c, pts + 2 * i)));
		if (h > best) {
			best = h;
			d = i;
		}
	}
	if (best <= tol)
		return wl_err_set(err, WL_ECALIB,
		                  "%s: the points lie on two lines at most (no four in general position): "
		                  "add points off those lines",
		                  what);
	(void)d;
	return WL_OK;
}

wl_status wl_homography_dlt(const double *src, const double *dst, int n, double H[9], wl_err *err)
{
	double Ts[9], Td[9], Tdi[9], ata[81], evals[9], evecs[81], Hn[9], tmp[9], scale = 0;
	wl_status st;
	if ((st = wl_homography_check_points(src, n, "homography", err)))
		return st;
	if (!normaliser(src, n, Ts) || !normaliser(dst, n, Td))
		return wl_err_set(err, WL_ECALIB, "homography: the points coincide");
	memset(ata, 0, sizeof ata);
	for (int i = 0; i < n; i++) {
		double x, y, u, v, r[2][9];
		apply_T(Ts, src[2 * i], src[2 * i + 1], &x, &y);
		apply_T(Td, dst[2 * i], dst[2 * i + 1], &u, &v);
		double r0[9] = {-x, -y, -1, 0, 0, 0, u * x, u * y, u};
		double r1[9] = {0, 0, 0, -x, -y, -1, v * x, v * y, v};
		memcpy(r[0], r0, sizeof r0);
		memcpy(r[1], r1, sizeof r1);
		for (int k = 0; k < 2; k++)
			for (int a = 0; a < 9; a++)
				for (int b = 0; b < 9; b++)
					ata[a * 9 + b] += r[k][a] * r[k][b];
	}
	wl_sym_eig(ata, 9, evals, evecs);
	for (int k = 0; k < 9; k++)
		Hn[k] = evecs[k * 9 + 0];
	/* H = Td^-1 · Hn · Ts */
	if (!wl_inv3(Td, Tdi))
		return wl_err_set(err, WL_ECALIB, "homography: normalisation failed");
	wl_mul3(Tdi, Hn, tmp);
	wl_mul3(tmp, Ts, H);
	for (int k = 0; k < 9; k++)
		scale = fmax(scale, fabs(H[k]));
	if (fabs(H[8]) > 1e-12 * scale)
		scale = H[8];
	for (int k = 0; k < 9; k++)
		H[k] /= scale;
	{
		double Hn2[9];
		for (int k = 0; k < 9; k++)
			Hn2[k] = Hn[k];
		if (fabs(wl_det3(Hn2)) < 1e-10)
			return wl_err_set(err, WL_ECALIB,
			                  "homography: the result is singular: the points are degenerate");
	}
	return WL_OK;
}

/* ---- Levenberg-Marquardt on the transfer error ---- */

static double cost_h(const double h[9], const double *s, const double *d, int n)
{
	double c = 0;
	for (int i = 0; i < n; i++) {
		double u, v;
		if (!wl_homography_apply(h, s[2 * i], s[2 * i + 1], &u, &v))
			return INFINITY;
		c += (u - d[2 * i]) * (u - d[2 * i]) + (v - d[2 * i + 1]) * (v - d[2 * i + 1]);
	}
	return c;
}

/* LM over h0..h7 (h8 = 1) in normalised coordinates, where the transfer
 * error is a fixed multiple of the pixel error. */
static void lm_h(double h[9], const double *s, const double *d, int n)
{
	double lambda = 1e-3, c = cost_h(h, s, d, n);
	for (int it = 0; it < 100 && c > 0; it++) {
		double JtJ[64] = {0}, Jtr[8] = {0};
		for (int i = 0; i < n; i++) {
			double x = s[2 * i], y = s[2 * i + 1], u, v;
			double w = h[6] * x + h[7] * y + h[8];
			if (!wl_homography_apply(h, x, y, &u, &v))
				return;
			double ju[8] = {x / w, y / w, 1 / w, 0, 0, 0, -u * x / w, -u * y / w};
			double jv[8] = {0, 0, 0, x / w, y / w, 1 / w, -v * x / w, -v * y / w};
			double ru = d[2 * i] - u, rv = d[2 * i + 1] - v;
			for (int a = 0; a < 8; a++) {
				Jtr[a] += ju[a] * ru + jv[a] * rv;
				for (int b = 0; b < 8; b++)
					JtJ[a * 8 + b] += ju[a] * ju[b] + jv[a] * jv[b];
			}
		}
		int improved = 0;
		for (int tries = 0; tries < 10 && !improved; tries++) {
			double A[64], step[8], hn[9];
			memcpy(A, JtJ, sizeof A);
			memcpy(step, Jtr, sizeof step);
			for (int a = 0; a < 8; a++)
				A[a * 8 + a] += lambda * (JtJ[a * 8 + a] + 1e-12);
			if (!wl_solve(A, step, 8)) {
				lambda *= 10;
				continue;
			}
			for (int a = 0; a < 8; a++)
				hn[a] = h[a] + step[a];
			hn[8] = 1;
			double cn = cost_h(hn, s, d, n);
			if (cn < c) {
				double rel = (c - cn) / c;
				memcpy(h, hn, sizeof hn);
				c = cn;
				lambda = fmax(lambda / 10, 1e-12);
				improved = 1;
				if (rel < 1e-14)
					return;
			} else {
				lambda *= 10;
			}
		}
		if (!improved)
			return;
	}
}

double wl_homography_refine(const double *src, const double *dst, int n, double H[9])
{
	double Ts[9], Td[9], Tsi[9], Tdi[9], tmp[9], Hn[9], s[2 * WL_CALIB_MAX_POINTS],
	        d[2 * WL_CALIB_MAX_POINTS];
	if (n < 4 || n > WL_CALIB_MAX_POINTS || !normaliser(src, n, Ts) || !normaliser(dst, n, Td) ||
	    !wl_inv3(Ts, Tsi) || !wl_inv3(Td, Tdi))
		return sqrt(cost_h(H, src, dst, n) / (n > 0 ? n : 1));
	for (int i = 0; i < n; i++) {
		apply_T(Ts, src[2 * i], src[2 * i + 1], &s[2 * i], &s[2 * i + 1]);
		apply_T(Td, dst[2 * i], dst[2 * i + 1], &d[2 * i], &d[2 * i + 1]);
	}
	wl_mul3(Td, H, tmp);
	wl_mul3(tmp, Tsi, Hn);
	if (fabs(Hn[8]) > 1e-9) {
		double k = Hn[8];
		for (int i = 0; i < 9; i++)
			Hn[i] /= k;
		lm_h(Hn, s, d, n);
		wl_mul3(Tdi, Hn, tmp);
		wl_mul3(tmp, Ts, H);
		k = fabs(H[8]) > 1e-300 ? H[8] : 1;
		for (int i = 0; i < 9; i++)
			H[i] /= k;
	}
	return sqrt(cost_h(H, src, dst, n) / n);
}

/* ---- Rodrigues ---- */

void wl_rodrigues(const double r[3], double R[9])
{
	double th = sqrt(r[0] * r[0] + r[1] * r[1] + r[2] * r[2]);
	double k[3], c, s, v;
	if (th < 1e-15) {
		/* first order: R = I + [r]x */
		double Rm[9] = {1, -r[2], r[1], r[2], 1, -r[0], -r[1], r[0], 1};
		memcpy(R, Rm, sizeof Rm);
		return;
	}
	k[0] = r[0] / th;
	k[1] = r[1] / th;
	k[2] = r[2] / th;
	c = cos(th);
	s = sin(th);
	v = 1 - c;
	R[0] = c + k[0] * k[0] * v;
	R[1] = k[0] * k[1] * v - k[2] * s;
	R[2] = k[0] * k[2] * v + k[1] * s;
	R[3] = k[1] * k[0] * v + k[2] * s;
	R[4] = c + k[1] * k[1] * v;
	R[5] = k[1] * k[2] * v - k[0] * s;
	R[6] = k[2] * k[0] * v - k[1] * s;
	R[7] = k[2] * k[1] * v + k[0] * s;
	R[8] = c + k[2] * k[2] * v;
}

void wl_rodrigues_inv(const double R[9], double r[3])
{
	double c = (R[0] + R[4] + R[8] - 1) / 2, th, s;
	double w[3] = {R[7] - R[5], R[2] - R[6], R[3] - R[1]};
	if (c > 1)
		c = 1;
	if (c < -1)
		c = -1;
	th = acos(c);
	s = sin(th);
	if (th < 1e-12) {
		r[0] = w[0] / 2;
		r[1] = w[1] / 2;
		r[2] = w[2] / 2;
		return;
	}
	if (s > 1e-6) {
		for (int i = 0; i < 3; i++)
			r[i] = w[i] * th / (2 * s);
		return;
	}
	/* near π: axis from the diagonal of (R + I)/2 = k kᵀ */
	{
		double k[3], n;
		int m = 0;
		for (int i = 0; i < 3; i++)
			if (R[4 * i] > R[4 * m])
				m = i;
		k[m] = sqrt(fmax((R[4 * m] + 1) / 2, 0));
		for (int i = 0; i < 3; i++)
			if (i != m)
				k[i] = (R[3 * m + i] + R[3 * i + m]) / 4 / k[m];
		if (w[0] * k[0] + w[1] * k[1] + w[2] * k[2] < 0)
			for (int i = 0; i < 3; i++)
				k[i] = -k[i];
		n = sqrt(k[0] * k[0] + k[1] * k[1] + k[2] * k[2]);
		for (int i = 0; i < 3; i++)
			r[i] = k[i] / n * th;
	}
}
