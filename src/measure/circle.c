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

#include "core/angle.h"
#include "core/linalg.h"
#include "measure/measure_priv.h"

/* Centred moments used by the Pratt and Taubin fits (Chernov 2010, §5). */
typedef struct {
	double mx, my;                           /* centroid */
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
		return wl_err_set(err, WL_EINVAL,
		                  "kasa circle fit: the points are collinear: no finite circle");
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
static wl_status centre_from_root(const moments *m, double x, double r2_extra, const char *what,
                                  wl_circle *out, wl_err *err)
{
	double cov_xy = m->Mxx * m->Myy - m->Mxy * m->Mxy;
	double det = x * x - x * m->Mz + cov_xy, xc, yc, r2;
	if (!(fabs(det) > 1e-14 * m->Mz * m->Mz))
		return wl_err_set(err, WL_EINVAL, "%s circle fit: the points are collinear: no finite circle",
		                  what);
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
	a0 = m.Mxz * (m.Mxz * m.Myy - m.Myz * m.Mxy) + m.Myz * (m.Myz * m.Mxx - m.Mxz * m.Mxy) -
	     var_z * cov_xy;
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
	a0 = m.Mxz * (m.Mxz * m.Myy - m.Myz * m.Mxy) + m.Myz * (m.Myz * m.Mxx - m.Mxz * m.Mxy) -
	     var_z * cov_xy;
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

/* The parameters: kappa, d, phi and, with a sway term, the coefficients a, b
 * of the lateral offset a·cos(ωt) + b·sin(ωt) (left positive). */
#define NP_MAX 6

typedef struct {
	const double *x, *y, *t; /* t: NULL without a sway term */
	double *cs;              /* cos, sin of ω t_i (2n values) with a sway term */
	size_t n;
	double rx, ry, w; /* reference point, sway angular frequency */
	int np;           /* 3 or 5 */
} problem;

/* Distance of point (X, Y), relative to the reference point, from the circle
 * p = (kappa, d, phi), positive to the right of travel, and its gradient
 * (Karimäki 1991, eq. for the distance; derivatives worked out here). */
static double resid(const double p[3], double s, double c, double X, double Y, double J[3])
{
	double k = p[0], d = p[1];
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

/* Residual of point i under the full model: the distance to the right of the
 * circle plus the modelled left offset. */
static double presid(const problem *pb, const double *p, double sphi, double cphi, size_t i, double *J)
{
	double e = resid(p, sphi, cphi, pb->x[i] - pb->rx, pb->y[i] - pb->ry, J);
	if (pb->np == 5) {
		double c = pb->cs[2 * i], s = pb->cs[2 * i + 1];
		e += p[3] * c + p[4] * s;
		if (J)
			J[3] = c, J[4] = s;
	}
	return e;
}

static double cost(const problem *pb, const double *p)
{
	double c = 0, sp = sin(p[2]), cp = cos(p[2]);
	for (size_t i = 0; i < pb->n; i++) {
		double e = presid(pb, p, sp, cp, i, NULL);
		c += e * e;
	}
	return c;
}

/* Total-least-squares line: unit direction oriented from the first point
 * toward the last, and the centroid. */
static void tls_line(const double *x, const double *y, size_t n, double *ux, double *uy, double *mx,
                     double *my)
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

/* Normal matrix JᵀJ and gradient Jᵀe at p. */
static void normal_eq(const problem *pb, const double *p, double *H, double *g)
{
	int np = pb->np;
	double sp = sin(p[2]), cp = cos(p[2]);
	memset(H, 0, sizeof(double) * np * np);
	memset(g, 0, sizeof(double) * np);
	for (size_t i = 0; i < pb->n; i++) {
		double J[NP_MAX], e = presid(pb, p, sp, cp, i, J);
		for (int r = 0; r < np; r++) {
			g[r] += J[r] * e;
			for (int s = 0; s < np; s++)
				H[np * r + s] += J[r] * J[s];
		}
	}
}

/* Levenberg-Marquardt (Marquardt 1963). */
static int lm_refine(const problem *pb, double *p)
{
	double lambda = 1e-3, c0 = cost(pb, p);
	int it, np = pb->np;
	for (it = 0; it < 500; it++) {
		double H[NP_MAX * NP_MAX], g[NP_MAX], A[NP_MAX * NP_MAX], b[NP_MAX], q[NP_MAX], c1, tr = 0;
		int accepted = 0;
		normal_eq(pb, p, H, g);
		for (int r = 0; r < np; r++)
			tr += H[(np + 1) * r];
		while (!accepted && lambda < 1e20) {
			memcpy(A, H, sizeof(double) * np * np);
			for (int r = 0; r < np; r++) {
				A[(np + 1) * r] += lambda * fmax(H[(np + 1) * r], 1e-12 * tr);
				b[r] = -g[r];
			}
			if (!wl_solve(A, b, np)) {
				lambda *= 10;
				continue;
			}
			for (int r = 0; r < np; r++)
				q[r] = p[r] + b[r];
			c1 = cost(pb, q);
			if (c1 <= c0) {
				double gain = c0 - c1;
				memcpy(p, q, sizeof(double) * np);
				accepted = 1;
				lambda = fmax(lambda * 0.3, 1e-15);
				if (gain <= 1e-16 * c0 || c1 == 0)
					return it + 1;
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

static void unpack(wl_geofit *f, const double *p, int np)
{
	f->kappa_per_m = p[0];
	f->d_m = p[1];
	f->phi_rad = p[2];
	f->sway_a_m = np == 5 ? p[3] : 0;
	f->sway_b_m = np == 5 ? p[4] : 0;
}

static void packed(const wl_geofit *f, double *p)
{
	p[0] = f->kappa_per_m;
	p[1] = f->d_m;
	p[2] = f->phi_rad;
	p[3] = f->sway_a_m;
	p[4] = f->sway_b_m;
}

/* The sign of kappa follows the direction of travel about the centre; the
 * same circle travelled the other way is (-kappa, -d, phi + π), which also
 * turns "left" around, so the sway coefficients change sign. */
static void geofit_finish(const double *x, const double *y, size_t n, wl_geofit *f)
{
	problem pb = {x, y, NULL, NULL, n, f->ref_x_m, f->ref_y_m, 0, 3};
	double nx, ny, p[NP_MAX];
	for (int pass = 0; pass < 2; pass++) {
		int flip = 0;
		nx = -sin(f->phi_rad), ny = cos(f->phi_rad);
		if (f->kappa_per_m != 0) {
			double rho = 1 / f->kappa_per_m;
			f->cx_m = f->ref_x_m + (f->d_m + rho) * nx;
			f->cy_m = f->ref_y_m + (f->d_m + rho) * ny;
			f->r_m = fabs(rho);
			flip = wl_measure_swept_angle(x, y, n, f->cx_m, f->cy_m) * f->kappa_per_m < 0;
		} else {
			f->cx_m = f->cy_m = NAN;
			f->r_m = INFINITY;
			flip = (x[n - 1] - x[0]) * ny - (y[n - 1] - y[0]) * nx < 0;
		}
		if (pass > 0 || !flip)
			break;
		f->kappa_per_m = -f->kappa_per_m, f->d_m = -f->d_m, f->phi_rad += WL_PI;
		f->sway_a_m = -f->sway_a_m, f->sway_b_m = -f->sway_b_m;
	}
	f->phi_rad = atan2(sin(f->phi_rad), cos(f->phi_rad));
	packed(f, p);
	f->rms_m = sqrt(cost(&pb, p) / (double)n);
}

wl_status wl_measure_fit_geometric(const double *x, const double *y, size_t n, wl_geofit *out, wl_err *err)
{
	double p[NP_MAX] = {0};
	problem pb = {x, y, NULL, NULL, n, 0, 0, 0, 3};
	wl_status st = check_points(x, y, n, "geometric", err);
	if (st)
		return st;
	memset(out, 0, sizeof *out);
	/* a data point as the reference keeps d small and the parameters well
	 * conditioned whether the path is a loop, an arc or a line */
	out->ref_x_m = pb.rx = x[n / 2];
	out->ref_y_m = pb.ry = y[n / 2];
	start_values(x, y, n, pb.rx, pb.ry, p);
	out->iterations = lm_refine(&pb, p);
	if (!isfinite(p[0]) || !isfinite(p[1]) || !isfinite(p[2]))
		return wl_err_set(err, WL_EINVAL, "geometric circle fit: did not converge");
	unpack(out, p, 3);
	geofit_finish(x, y, n, out);
	return WL_OK;
}

/* cos, sin of ω t_i for the sway term; freed by the caller with free(). */
static double *sway_table(const double *t, size_t n, double w)
{
	double *cs = malloc(2 * n * sizeof *cs);
	for (size_t i = 0; cs && i < n; i++) {
		cs[2 * i] = cos(w * t[i]);
		cs[2 * i + 1] = sin(w * t[i]);
	}
	return cs;
}

wl_status wl_measure_fit_geometric_sway(const double *x, const double *y, const double *t, size_t n,
                                        double freq_hz, double a0_m, double b0_m, wl_geofit *out, wl_err *err)
{
	double p[NP_MAX];
	wl_geofit first;
	problem pb = {x, y, t, NULL, n, 0, 0, 2 * WL_PI * freq_hz, 5};
	wl_status st = wl_measure_fit_geometric(x, y, n, &first, err);
	if (st)
		return st;
	if (!(freq_hz > 0) || !isfinite(freq_hz) || n < 6)
		return wl_err_set(err, WL_EINVAL,
		                  "geometric circle fit with sway: frequency %g Hz or %zu points", freq_hz,
		                  n);
	if (!(pb.cs = sway_table(t, n, pb.w)))
		return wl_err_set(err, WL_ENOMEM,
		                  "geometric circle fit with sway: out of memory for %zu points", n);
	*out = first;
	out->sway_freq_hz = freq_hz;
	out->sway_a_m = a0_m;
	out->sway_b_m = b0_m;
	pb.rx = first.ref_x_m;
	pb.ry = first.ref_y_m;
	packed(out, p);
	out->iterations += lm_refine(&pb, p);
	free(pb.cs);
	for (int i = 0; i < 5; i++)
		if (!isfinite(p[i]))
			return wl_err_set(err, WL_EINVAL, "geometric circle fit with sway: did not converge");
	unpack(out, p, 5);
	geofit_finish(x, y, n, out);
	return WL_OK;
}

double wl_measure_geofit_offset(const wl_geofit *f, double x, double y)
{
	double p[NP_MAX];
	packed(f, p);
	return -resid(p, sin(p[2]), cos(p[2]), x - f->ref_x_m, y - f->ref_y_m, NULL);
}

/* ---- autocorrelation-consistent standard error ---------------------------- */

#define AR_MAX 12

/* Levinson-Durbin recursion on the autocovariances g[0..pmax]: phi[m][j]
 * (j = 1..m) are the order-m predictor coefficients and v[m] its innovation
 * variance.  Returns the order chosen by Akaike's criterion n·ln v + 2m. */
static int levinson_aic(const double *g, int pmax, size_t n, double phi[AR_MAX + 1][AR_MAX + 1], double *v)
{
	int best = 0;
	double best_aic;
	memset(phi, 0, sizeof(double) * (AR_MAX + 1) * (AR_MAX + 1));
	v[0] = g[0];
	best_aic = (double)n * log(g[0]);
	for (int m = 1; m <= pmax; m++) {
		double acc = g[m], k, aic;
		for (int j = 1; j < m; j++)
			acc -= phi[m - 1][j] * g[m - j];
		k = acc / v[m - 1];
		if (!(fabs(k) < 1)) /* numerically singular: stop at m - 1 */
			return best;
		phi[m][m] = k;
		for (int j = 1; j < m; j++)
			phi[m][j] = phi[m - 1][j] - k * phi[m - 1][m - j];
		v[m] = v[m - 1] * (1 - k * k);
		aic = (double)n * log(v[m]) + 2 * m;
		if (aic < best_aic)
			best_aic = aic, best = m;
	}
	return best;
}

/* See measure_priv.h.  Γ = W⁻¹ D W⁻ᵀ, W the innovations filter of the AR
 * model of r (row i uses the order-min(i, p) predictor, D its innovation
 * variances): then Jᵀ Γ J = Zᵀ D Z with Wᵀ Z = J, solved by back
 * substitution.  J is overwritten by Z. */
int wl_measure_ar_quadform(double *J, const double *r, size_t n, int np, double *Om)
{
	double acov[AR_MAX + 1] = {0}, v[AR_MAX + 1], phi[AR_MAX + 1][AR_MAX + 1];
	int order, pmax = (int)(n / 10 < AR_MAX ? n / 10 : AR_MAX);
	memset(Om, 0, (size_t)np * (size_t)np * sizeof *Om);
	for (int k = 0; k <= pmax; k++) {
		for (size_t i = (size_t)k; i < n; i++)
			acov[k] += r[i] * r[i - k];
		acov[k] /= (double)n;
	}
	if (!(acov[0] > 0))
		return -1;
	order = levinson_aic(acov, pmax, n, phi, v);
	for (size_t ii = n; ii-- > 0;) {
		double *zi = J + (size_t)np * ii;
		for (int j = 1; j <= order && ii + (size_t)j < n; j++) {
			size_t k = ii + (size_t)j;
			int ord = k < (size_t)order ? (int)k : order;
			if (j > ord)
				continue;
			for (int a = 0; a < np; a++)
				zi[a] += phi[ord][j] * J[(size_t)np * k + a];
		}
	}
	for (size_t i = 0; i < n; i++) {
		double d = v[i < (size_t)order ? i : (size_t)order];
		for (int a = 0; a < np; a++)
			for (int b = 0; b < np; b++)
				Om[np * a + b] += d * J[(size_t)np * i + a] * J[(size_t)np * i + b];
	}
	return order;
}

int wl_measure_sandwich(double *J, const double *r, size_t n, int np, double *C)
{
	double H[NP_MAX * NP_MAX] = {0}, Hi[NP_MAX * NP_MAX], Om[NP_MAX * NP_MAX], T[NP_MAX * NP_MAX];
	int order;
	if (np > NP_MAX || n <= (size_t)np)
		return -2;
	for (size_t i = 0; i < n; i++)
		for (int a = 0; a < np; a++)
			for (int b = 0; b < np; b++)
				H[np * a + b] += J[(size_t)np * i + a] * J[(size_t)np * i + b];
	if (!wl_invert(H, Hi, np))
		return -2;
	order = wl_measure_ar_quadform(J, r, n, np, Om);
	if (order < 0) {
		memset(C, 0, (size_t)np * (size_t)np * sizeof *C);
		return 0;
	}
	wl_mat_mul(Hi, Om, T, np, np, np);
	wl_mat_mul(T, Hi, C, np, np, np);
	for (int a = 0; a < np * np; a++)
		C[a] *= (double)n / (double)(n - (size_t)np);
	return order;
}

wl_status wl_measure_curvature_se(const double *x, const double *y, const double *t, size_t n,
                                  const wl_geofit *f, double *se, int *order_out, wl_err *err)
{
	double C[NP_MAX * NP_MAX], p[NP_MAX];
	double *r = NULL, *Z = NULL;
	problem pb = {x, y, t, NULL, n, f->ref_x_m, f->ref_y_m, 2 * WL_PI * f->sway_freq_hz, 3};
	wl_status st = WL_OK;
	int np, order;
	if (f->sway_freq_hz > 0) {
		if (!t)
			return wl_err_set(err, WL_EINVAL,
			                  "curvature uncertainty: a fit with sway needs the times");
		pb.np = 5;
	}
	np = pb.np;
	if (n < 20)
		return wl_err_set(err, WL_EINVAL, "curvature uncertainty: %zu points: give at least 20", n);
	r = malloc(n * sizeof *r);
	Z = malloc((size_t)np * n * sizeof *Z);
	if (np == 5)
		pb.cs = sway_table(t, n, pb.w);
	if (!r || !Z || (np == 5 && !pb.cs)) {
		st = wl_err_set(err, WL_ENOMEM, "curvature uncertainty: out of memory for %zu points", n);
		goto out;
	}
	packed(f, p);
	for (size_t i = 0; i < n; i++)
		r[i] = presid(&pb, p, sin(p[2]), cos(p[2]), i, Z + (size_t)np * i);
	/* the sandwich with an autoregressive model of the residual series
	 * (Yule-Walker, order by AIC) */
	order = wl_measure_sandwich(Z, r, n, np, C);
	if (order < -1) {
		st = wl_err_set(err, WL_EINVAL,
		                "curvature uncertainty: the fit is singular (too few distinct points)");
		goto out;
	}
	*se = sqrt(fmax(C[0], 0));
	if (order_out)
		*order_out = order;
out:
	free(r);
	free(Z);
	free(pb.cs);
	return st;
}
