/*
 * circle.c: circle fits for the measure stage (see measure.h): the algebraic
 * Kasa, Pratt and Taubin fits, the geometric fit refined by
 * Levenberg-Marquardt, and the autocorrelation-consistent standard error of
 * its curvature.
 */
#include "measure/measure.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/linalg.h"

#define PI 3.14159265358979323846

static void packed(const wl_geofit *f, double p[3])
{
	p[0] = f->kappa_per_m;
	p[1] = f->d_m;
	p[2] = f->phi_rad;
}

/* Centred moments used by the Pratt and Taubin fits (Chernov 2010, §5). */
typedef struct {
	double mx, my;                          /* centroid */
	double Mxx, Myy, Mxy, Mxz, Myz, Mzz, Mz; /* averages over the points */
} moments;

static void get_moments(const double *x, const double *y, size_t n, moments *m)
{
	memset(m, 0, sizeof *m);
	for (size_t i = 0; i < n; i++) {
		m->mx += x[i];
		m->my += y[i];
	}
	m->mx /= (double)n;
	m->my /= (double)n;
	for (size_t i = 0; i < n; i++) {
		double X = x[i] - m->mx, Y = y[i] - m->my, Z = X * X + Y * Y;
		m->Mxx += X * X;
		m->Myy += Y * Y;
		m->Mxy += X * Y;
		m->Mxz += X * Z;
		m->Myz += Y * Z;
		m->Mzz += Z * Z;
	}
	m->Mxx /= (double)n;
	m->Myy /= (double)n;
	m->Mxy /= (double)n;
	m->Mxz /= (double)n;
	m->Myz /= (double)n;
	m->Mzz /= (double)n;
	m->Mz = m->Mxx + m->Myy;
}

static wl_status check_points(const double *x, const double *y, size_t n, const char *what, wl_err *err)
{
	if (n < 3)
		return wl_err_set(err, WL_EINVAL, "%s circle fit: %zu points: give at least 3", what, n);
	for (size_t i = 0; i < n; i++)
		if (!isfinite(x[i]) || !isfinite(y[i]))
			return wl_err_set(err, WL_EINVAL, "%s circle fit: point %zu is not finite", what, i);
	return WL_OK;
}

wl_status wl_measure_fit_kasa(const double *x, const double *y, size_t n, wl_circle *out, wl_err *err)
{
	/* Kasa (1976): minimise sum (x²+y² + D x + E y + F)², linear in D, E, F.
	 * Centred on the centroid for conditioning. */
	double a[9] = {0}, b[3] = {0}, mx = 0, my = 0, r2;
	wl_status st = check_points(x, y, n, "kasa", err);
	if (st)
		return st;
	for (size_t i = 0; i < n; i++) {
		mx += x[i];
		my += y[i];
	}
	mx /= (double)n;
	my /= (double)n;
	for (size_t i = 0; i < n; i++) {
		double X = x[i] - mx, Y = y[i] - my, Z = X * X + Y * Y;
		a[0] += X * X, a[1] += X * Y, a[2] += X;
		a[4] += Y * Y, a[5] += Y;
		b[0] -= X * Z, b[1] -= Y * Z, b[2] -= Z;
	}
	a[3] = a[1], a[6] = a[2], a[7] = a[5], a[8] = (double)n;
	if (!wl_solve(a, b, 3))
		return wl_err_set(err, WL_EINVAL, "kasa circle fit: the points are collinear: no finite circle");
	r2 = 0.25 * (b[0] * b[0] + b[1] * b[1]) - b[2];
	if (!(r2 > 0) || !isfinite(r2))
		return wl_err_set(err, WL_EINVAL, "kasa circle fit: degenerate points: no finite circle");
	out->cx_m = mx - 0.5 * b[0];
	out->cy_m = my - 0.5 * b[1];
	out->r_m = sqrt(r2);
	return WL_OK;
}

/* Newton's method from x = 0 on the polynomial a0 + a1 x + a2 x² + a3 x³ + a4 x⁴,
 * stopping when |p| stops decreasing (Chernov's formulation: the wanted root is
 * the one nearest 0 from the right). */
static double newton_root(double a0, double a1, double a2, double a3, double a4)
{
	double x = 0, p = a0;
	for (int it = 0; it < 99; it++) {
		double dp = a1 + x * (2 * a2 + x * (3 * a3 + 4 * a4 * x));
		double xn = x - p / dp, pn;
		if (!isfinite(xn) || xn == x)
			break;
		pn = a0 + xn * (a1 + xn * (a2 + xn * (a3 + xn * a4)));
		if (fabs(pn) >= fabs(p))
			break;
		x = xn;
		p = pn;
	}
	return x;
}

/* Centre from the root x of either characteristic polynomial. */
static wl_status centre_from_root(const moments *m, double x, double r2_extra, const char *what, wl_circle *out,
				  wl_err *err)
{
	double cov_xy = m->Mxx * m->Myy - m->Mxy * m->Mxy;
	double det = x * x - x * m->Mz + cov_xy, xc, yc, r2;
	if (!(fabs(det) > 1e-14 * m->Mz * m->Mz))
		return wl_err_set(err, WL_EINVAL, "%s circle fit: the points are collinear: no finite circle", what);
	xc = (m->Mxz * (m->Myy - x) - m->Myz * m->Mxy) / det / 2;
	yc = (m->Myz * (m->Mxx - x) - m->Mxz * m->Mxy) / det / 2;
	r2 = xc * xc + yc * yc + m->Mz + r2_extra;
	if (!(r2 > 0) || !isfinite(r2))
		return wl_err_set(err, WL_EINVAL, "%s circle fit: degenerate points: no finite circle", what);
	out->cx_m = xc + m->mx;
	out->cy_m = yc + m->my;
	out->r_m = sqrt(r2);
	return WL_OK;
}

wl_status wl_measure_fit_pratt(const double *x, const double *y, size_t n, wl_circle *out, wl_err *err)
{
	/* Pratt (1987), Newton form of Chernov (2010): 4x⁴ + A2 x² + A1 x + A0. */
	moments m;
	double cov_xy, var_z, a2, a1, a0, root;
	wl_status st = check_points(x, y, n, "pratt", err);
	if (st)
		return st;
	get_moments(x, y, n, &m);
	cov_xy = m.Mxx * m.Myy - m.Mxy * m.Mxy;
	var_z = m.Mzz - m.Mz * m.Mz;
	a2 = 4 * cov_xy - 3 * m.Mz * m.Mz - m.Mzz;
	a1 = var_z * m.Mz + 4 * cov_xy * m.Mz - m.Mxz * m.Mxz - m.Myz * m.Myz;
	a0 = m.Mxz * (m.Mxz * m.Myy - m.Myz * m.Mxy) + m.Myz * (m.Myz * m.Mxx - m.Mxz * m.Mxy) - var_z * cov_xy;
	root = newton_root(a0, a1, a2, 0, 4);
	return centre_from_root(&m, root, 2 * root, "pratt", out, err);
}

wl_status wl_measure_fit_taubin(const double *x, const double *y, size_t n, wl_circle *out, wl_err *err)
{
	/* Taubin (1991), Newton form of Chernov (2010): A3 x³ + A2 x² + A1 x + A0. */
	moments m;
	double cov_xy, var_z, a3, a2, a1, a0, root;
	wl_status st = check_points(x, y, n, "taubin", err);
	if (st)
		return st;
	get_moments(x, y, n, &m);
	cov_xy = m.Mxx * m.Myy - m.Mxy * m.Mxy;
	var_z = m.Mzz - m.Mz * m.Mz;
	a3 = 4 * m.Mz;
	a2 = -3 * m.Mz * m.Mz - m.Mzz;
	a1 = var_z * m.Mz + 4 * cov_xy * m.Mz - m.Mxz * m.Mxz - m.Myz * m.Myz;
	a0 = m.Mxz * (m.Mxz * m.Myy - m.Myz * m.Mxy) + m.Myz * (m.Myz * m.Mxx - m.Mxz * m.Mxy) - var_z * cov_xy;
	root = newton_root(a0, a1, a2, a3, 0);
	return centre_from_root(&m, root, 0, "taubin", out, err);
}

double wl_measure_swept_angle(const double *x, const double *y, size_t n, double cx, double cy)
{
	double sum = 0;
	for (size_t i = 1; i < n; i++) {
		double ax = x[i - 1] - cx, ay = y[i - 1] - cy, bx = x[i] - cx, by = y[i] - cy;
		sum += atan2(ax * by - ay * bx, ax * bx + ay * by);
	}
	return sum;
}

/* ---- geometric fit in (kappa, d, phi) ------------------------------------ */

/* Distance of point (X, Y), relative to the reference point, from the circle
 * p = (kappa, d, phi), positive to the right of travel, and its gradient
 * (Karimäki 1991, eq. for the distance; derivatives worked out here). */
static double resid(const double p[3], double X, double Y, double J[3])
{
	double k = p[0], d = p[1], s = sin(p[2]), c = cos(p[2]);
	double pn = -X * s + Y * c, pu = X * c + Y * s, rr = X * X + Y * Y;
	double P = 0.5 * k * (rr + d * d) - (1 + k * d) * pn + d;
	double S = sqrt(fmax(1 + 2 * k * P, 0)), q = 1 + S, e = 2 * P / q;
	if (J) {
		double Ss = fmax(S, 1e-12);
		double e_P = (2 * q - 2 * P * k / Ss) / (q * q);
		double e_k = -2 * P * (P / Ss) / (q * q);
		J[0] = e_P * (0.5 * (rr + d * d) - d * pn) + e_k;
		J[1] = e_P * (1 + k * (d - pn));
		J[2] = e_P * (1 + k * d) * pu;
	}
	return e;
}

static double cost(const double p[3], const double *x, const double *y, size_t n, double rx, double ry)
{
	double c = 0;
	for (size_t i = 0; i < n; i++) {
		double e = resid(p, x[i] - rx, y[i] - ry, NULL);
		c += e * e;
	}
	return c;
}

/* Total-least-squares line: unit direction oriented from the first point
 * toward the last, and the centroid. */
static void tls_line(const double *x, const double *y, size_t n, double *ux, double *uy, double *mx, double *my)
{
	double a[4] = {0}, ev[2], vec[4];
	*mx = *my = 0;
	for (size_t i = 0; i < n; i++) {
		*mx += x[i];
		*my += y[i];
	}
	*mx /= (double)n;
	*my /= (double)n;
	for (size_t i = 0; i < n; i++) {
		double X = x[i] - *mx, Y = y[i] - *my;
		a[0] += X * X, a[1] += X * Y, a[3] += Y * Y;
	}
	a[2] = a[1];
	wl_sym_eig(a, 2, ev, vec);
	*ux = vec[1]; /* column 1: the larger eigenvalue */
	*uy = vec[3];
	if (*ux * (x[n - 1] - x[0]) + *uy * (y[n - 1] - y[0]) < 0) {
		*ux = -*ux;
		*uy = -*uy;
	}
}

/* Start values from Taubin's circle, or from the line when Taubin has none
 * or one far larger than the data. */
static void start_values(const double *x, const double *y, size_t n, double rx, double ry, double p[3])
{
	wl_circle c;
	double ux, uy, mx, my, span = 0;
	for (size_t i = 0; i < n; i++)
		span = fmax(span, hypot(x[i] - rx, y[i] - ry));
	if (wl_measure_fit_taubin(x, y, n, &c, NULL) == WL_OK && c.r_m < 1e4 * span) {
		double s = wl_measure_swept_angle(x, y, n, c.cx_m, c.cy_m) < 0 ? -1 : 1;
		double X = c.cx_m - rx, Y = c.cy_m - ry, L = hypot(X, Y), nx = 0, ny = 1;
		if (L > 0)
			nx = s * X / L, ny = s * Y / L;
		p[0] = s / c.r_m;
		p[1] = s * (L - c.r_m);
		p[2] = atan2(-nx, ny);
		return;
	}
	tls_line(x, y, n, &ux, &uy, &mx, &my);
	p[0] = 0;
	p[1] = (mx - rx) * -uy + (my - ry) * ux;
	p[2] = atan2(uy, ux);
}

/* Levenberg-Marquardt (Marquardt 1963) on the three parameters. */
static int lm_refine(const double *x, const double *y, size_t n, double rx, double ry, double p[3])
{
	double lambda = 1e-3, c0 = cost(p, x, y, n, rx, ry);
	int it;
	for (it = 0; it < 500; it++) {
		double H[9] = {0}, g[3] = {0}, A[9], b[3], q[3], c1;
		int accepted = 0;
		for (size_t i = 0; i < n; i++) {
			double J[3], e = resid(p, x[i] - rx, y[i] - ry, J);
			for (int r = 0; r < 3; r++) {
				g[r] += J[r] * e;
				for (int s = 0; s < 3; s++)
					H[3 * r + s] += J[r] * J[s];
			}
		}
		while (!accepted && lambda < 1e20) {
			memcpy(A, H, sizeof A);
			for (int r = 0; r < 3; r++) {
				A[4 * r] += lambda * fmax(H[4 * r], 1e-12 * (H[0] + H[4] + H[8]));
				b[r] = -g[r];
			}
			if (!wl_solve(A, b, 3)) {
				lambda *= 10;
				continue;
			}
			for (int r = 0; r < 3; r++)
				q[r] = p[r] + b[r];
			c1 = cost(q, x, y, n, rx, ry);
			if (c1 <= c0) {
				double gain = c0 - c1;
				memcpy(p, q, sizeof q);
				accepted = 1;
				lambda = fmax(lambda * 0.3, 1e-15);
				if (gain <= 1e-16 * c0 || c1 == 0) {
					c0 = c1;
					return it + 1;
				}
				c0 = c1;
			} else {
				lambda *= 10;
			}
		}
		if (!accepted)
			break; /* no step lowers the cost: at the minimum to working precision */
	}
	return it + 1;
}

static void geofit_finish(const double *x, const double *y, size_t n, wl_geofit *f)
{
	double nx, ny, p[3];
	/* the sign of kappa follows the direction of travel about the centre */
	for (int pass = 0; pass < 2; pass++) {
		nx = -sin(f->phi_rad), ny = cos(f->phi_rad);
		if (f->kappa_per_m != 0) {
			double rho = 1 / f->kappa_per_m;
			f->cx_m = f->ref_x_m + (f->d_m + rho) * nx;
			f->cy_m = f->ref_y_m + (f->d_m + rho) * ny;
			f->r_m = fabs(rho);
			if (pass == 0 && wl_measure_swept_angle(x, y, n, f->cx_m, f->cy_m) * f->kappa_per_m < 0) {
				f->kappa_per_m = -f->kappa_per_m, f->d_m = -f->d_m, f->phi_rad += PI;
				continue;
			}
		} else {
			f->cx_m = f->cy_m = NAN;
			f->r_m = INFINITY;
			if (pass == 0 && (x[n - 1] - x[0]) * ny - (y[n - 1] - y[0]) * nx < 0) {
				f->d_m = -f->d_m, f->phi_rad += PI;
				continue;
			}
		}
		break;
	}
	f->phi_rad = atan2(sin(f->phi_rad), cos(f->phi_rad));
	packed(f, p);
	f->rms_m = sqrt(cost(p, x, y, n, f->ref_x_m, f->ref_y_m) / (double)n);
}

wl_status wl_measure_fit_geometric(const double *x, const double *y, size_t n, wl_geofit *out, wl_err *err)
{
	double p[3];
	wl_status st = check_points(x, y, n, "geometric", err);
	if (st)
		return st;
	memset(out, 0, sizeof *out);
	/* a data point as the reference keeps d small and the parameters well
	 * conditioned whether the path is a loop, an arc or a line */
	out->ref_x_m = x[n / 2];
	out->ref_y_m = y[n / 2];
	start_values(x, y, n, out->ref_x_m, out->ref_y_m, p);
	out->iterations = lm_refine(x, y, n, out->ref_x_m, out->ref_y_m, p);
	if (!isfinite(p[0]) || !isfinite(p[1]) || !isfinite(p[2]))
		return wl_err_set(err, WL_EINVAL, "geometric circle fit: did not converge");
	out->kappa_per_m = p[0];
	out->d_m = p[1];
	out->phi_rad = p[2];
	geofit_finish(x, y, n, out);
	return WL_OK;
}

double wl_measure_geofit_offset(const wl_geofit *f, double x, double y)
{
	double p[3];
	packed(f, p);
	return -resid(p, x - f->ref_x_m, y - f->ref_y_m, NULL);
}

/* ---- autocorrelation-consistent standard error ---------------------------- */

/* Andrews (1991) AR(1) plug-in bandwidth for the Bartlett kernel, averaged
 * over the standardised score components. */
static int andrews_bandwidth(const double *e, size_t m)
{
	double alpha = 0;
	for (int a = 0; a < 3; a++) {
		double num = 0, den = 0, rho;
		for (size_t i = 1; i < m; i++) {
			num += e[3 * i + a] * e[3 * (i - 1) + a];
			den += e[3 * (i - 1) + a] * e[3 * (i - 1) + a];
		}
		rho = den > 0 ? fmax(-0.97, fmin(0.97, num / den)) : 0;
		alpha += 4 * rho * rho / ((1 - rho) * (1 - rho) * (1 + rho) * (1 + rho)) / 3;
	}
	double bw = ceil(1.1447 * cbrt(alpha * (double)m));
	if (bw < 1)
		bw = 1;
	if (bw > (double)m / 3)
		bw = floor((double)m / 3);
	return (int)bw;
}

/* Scales A so that its largest singular value is at most 0.97, as Andrews &
 * Monahan (1992) do to keep the recolouring (I - A)⁻¹ bounded. */
static void limit_var1(double A[9])
{
	double At[9], AtA[9], ev[3], vec[9];
	wl_mat_transpose(A, At, 3, 3);
	wl_mat_mul(At, A, AtA, 3, 3, 3);
	wl_sym_eig(AtA, 3, ev, vec);
	if (ev[2] > 0.97 * 0.97) {
		double s = 0.97 / sqrt(ev[2]);
		for (int i = 0; i < 9; i++)
			A[i] *= s;
	}
}

wl_status wl_measure_curvature_se(const double *x, const double *y, size_t n, const wl_geofit *f, double *se,
				  int *bw_out, wl_err *err)
{
	double H[9] = {0}, Hi[9], S01[9] = {0}, S00[9] = {0}, S00i[9], A[9], B[9], IA[9], Om[9] = {0}, T[9],
	       Om2[9], C[9], p[3];
	double *h = NULL, *e = NULL;
	wl_status st = WL_OK;
	int M;
	if (n < 8)
		return wl_err_set(err, WL_EINVAL, "curvature uncertainty: %zu points: give at least 8", n);
	h = malloc(3 * n * sizeof *h);
	e = malloc(3 * n * sizeof *e);
	if (!h || !e) {
		st = wl_err_set(err, WL_ENOMEM, "curvature uncertainty: out of memory for %zu points", n);
		goto out;
	}
	packed(f, p);
	for (size_t i = 0; i < n; i++) {
		double J[3], r = resid(p, x[i] - f->ref_x_m, y[i] - f->ref_y_m, J);
		for (int a = 0; a < 3; a++) {
			h[3 * i + a] = J[a] * r;
			for (int b = 0; b < 3; b++)
				H[3 * a + b] += J[a] * J[b];
		}
	}
	if (!wl_invert(H, Hi, 3)) {
		st = wl_err_set(err, WL_EINVAL, "curvature uncertainty: the fit is singular (too few distinct points)");
		goto out;
	}
	/* VAR(1) prewhitening of the scores */
	for (size_t i = 1; i < n; i++)
		for (int a = 0; a < 3; a++)
			for (int b = 0; b < 3; b++) {
				S01[3 * a + b] += h[3 * i + a] * h[3 * (i - 1) + b];
				S00[3 * a + b] += h[3 * (i - 1) + a] * h[3 * (i - 1) + b];
			}
	if (wl_invert(S00, S00i, 3)) {
		wl_mat_mul(S01, S00i, A, 3, 3, 3);
		limit_var1(A);
	} else {
		memset(A, 0, sizeof A);
	}
	for (size_t i = 1; i < n; i++)
		for (int a = 0; a < 3; a++) {
			double v = h[3 * i + a];
			for (int b = 0; b < 3; b++)
				v -= A[3 * a + b] * h[3 * (i - 1) + b];
			e[3 * (i - 1) + a] = v;
		}
	/* Bartlett-kernel long-run covariance of the whitened scores */
	M = andrews_bandwidth(e, n - 1);
	for (int k = 0; k <= M; k++) {
		double w = k == 0 ? 1 : 1 - (double)k / (M + 1);
		for (size_t i = (size_t)k; i < n - 1; i++)
			for (int a = 0; a < 3; a++)
				for (int b = 0; b < 3; b++) {
					double g = e[3 * i + a] * e[3 * (i - k) + b];
					Om[3 * a + b] += w * g;
					if (k > 0)
						Om[3 * b + a] += w * g;
				}
	}
	/* recolour: (I - A)⁻¹ Ω (I - A)⁻ᵀ, then the sandwich H⁻¹ Ω H⁻¹ */
	for (int i = 0; i < 9; i++)
		IA[i] = (i % 4 == 0 ? 1 : 0) - A[i];
	if (!wl_invert(IA, B, 3)) {
		st = wl_err_set(err, WL_EINVAL, "curvature uncertainty: prewhitening failed");
		goto out;
	}
	wl_mat_mul(B, Om, T, 3, 3, 3);
	wl_mat_transpose(B, IA, 3, 3);
	wl_mat_mul(T, IA, Om2, 3, 3, 3);
	wl_mat_mul(Hi, Om2, T, 3, 3, 3);
	wl_mat_mul(T, Hi, C, 3, 3, 3);
	*se = sqrt(fmax(C[0], 0) * (double)n / (double)(n - 3));
	if (bw_out)
		*bw_out = M;
out:
	free(h);
	free(e);
	return st;
}
