/*
 * run.c: the measures of one run (see measure.h): path measures, the circle
 * and its straight rule, and the yaw and sway oscillations.
 */
#include "measure/measure.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/angle.h"
#include "core/linalg.h"
#include "measure/measure_priv.h"

void wl_measure_opts_init(wl_measure_opts *o)
{
	o->min_arc_deg = 5;
	o->body_diameter_m = NAN;
	o->osc_fmin_hz = NAN;
	o->osc_fmax_hz = NAN;
}

/* ---- oscillation ---------------------------------------------------------- */

/* Residual sum of squares of the least-squares fit c + a cos(wt) + b sin(wt);
 * cs is scratch for 2n values. */
/* cs[2i], cs[2i+1] = cos, sin of w·(t_i − t0).  Successive phasors are
 * rotated by the step's e^{iwΔt}; for steps within 1e-3 rad of the first
 * one the rotation is that step's times a second-order correction (error
 * below 2e-10 rad a step), and the phasor is recomputed exactly every 128
 * samples, so that evenly sampled series cost no trigonometry. */
static void phasors(const double *t, size_t n, double w, double t0, double *cs)
{
	double dt0 = n > 1 ? t[1] - t[0] : 0, rc = cos(w * dt0), rs = sin(w * dt0);
	for (size_t i = 0; i < n; i++) {
		double e;
		if (i % 128 == 0 || fabs(e = w * (t[i] - t[i - 1] - dt0)) > 1e-3) {
			cs[2 * i] = cos(w * (t[i] - t0));
			cs[2 * i + 1] = sin(w * (t[i] - t0));
			continue;
		}
		{
			double ec = 1 - 0.5 * e * e, es = e, qc = rc * ec - rs * es, qs = rs * ec + rc * es;
			double pc = cs[2 * i - 2], ps = cs[2 * i - 1];
			cs[2 * i] = pc * qc - ps * qs;
			cs[2 * i + 1] = ps * qc + pc * qs;
		}
	}
}

/* The least-squares fit c0 + c1 u + c2 u² + a cos(wt) + b sin(wt), u = (t -
 * tm) / ts over the span of t: the sine jointly with a quadratic trend.  A
 * sine fitted after the trend was removed loses the part of it that the
 * trend took (the removal is not orthogonal to a sine over a non-whole
 * number of cycles): 0.3-0.5% of the amplitude at 10-20 cycles, many times
 * the amplitude's standard error, and the frequency moves by a few tenths
 * of a millihertz.  Returns the residual sum of squares; coef (may be NULL)
 * receives (c0, a, b, c1, c2).  cs is scratch for 2n values. */
static double sine_rss(const double *t, const double *v, size_t n, double f, double t0, double *cs,
                       double coef[5])
{
	double A[25] = {0}, b[5] = {0}, rss = 0, w = 2 * WL_PI * f, tm = 0.5 * (t[0] + t[n - 1]),
	       ts = 0.5 * (t[n - 1] - t[0]);
	if (!(ts > 0))
		ts = 1;
	phasors(t, n, w, t0, cs);
	for (size_t i = 0; i < n; i++) {
		double u = (t[i] - tm) / ts, r[5] = {1, cs[2 * i], cs[2 * i + 1], u, u * u};
		for (int j = 0; j < 5; j++) {
			b[j] += r[j] * v[i];
			for (int k = j; k < 5; k++)
				A[5 * j + k] += r[j] * r[k];
		}
	}
	for (int j = 0; j < 5; j++)
		for (int k = 0; k < j; k++)
			A[5 * j + k] = A[5 * k + j];
	if (!wl_solve(A, b, 5))
		return INFINITY;
	for (size_t i = 0; i < n; i++) {
		double u = (t[i] - tm) / ts,
		       e = v[i] - b[0] - b[1] * cs[2 * i] - b[2] * cs[2 * i + 1] - b[3] * u - b[4] * u * u;
		rss += e * e;
	}
	if (coef)
		memcpy(coef, b, sizeof b);
	return rss;
}

/* In-place iterative radix-2 FFT of n (a power of two) complex values. */
static void fft(double *re, double *im, size_t n)
{
	for (size_t i = 1, j = 0; i < n; i++) {
		size_t bit = n >> 1;
		for (; j & bit; bit >>= 1)
			j ^= bit;
		j ^= bit;
		if (i < j) {
			double t = re[i];
			re[i] = re[j], re[j] = t;
			t = im[i], im[i] = im[j], im[j] = t;
		}
	}
	for (size_t len = 2; len <= n; len <<= 1) {
		double ang = -2 * WL_PI / (double)len, wr = cos(ang), wi = sin(ang);
		for (size_t i = 0; i < n; i += len) {
			double cr = 1, ci = 0;
			for (size_t k = 0; k < len / 2; k++) {
				size_t a = i + k, b = i + k + len / 2;
				double xr = re[b] * cr - im[b] * ci, xi = re[b] * ci + im[b] * cr, nr;
				re[b] = re[a] - xr, im[b] = im[a] - xi;
				re[a] += xr, im[a] += xi;
				nr = cr * wr - ci * wi;
				ci = cr * wi + ci * wr;
				cr = nr;
			}
		}
	}
}

/* The Hann-windowed periodogram of the series resampled on an even grid of
 * n points, zero-padded to nfft (a power of two >= 2n): re[k] receives the
 * power at frequency k / (nfft dt) for k = 0 .. nfft/2; returns dt.  g is
 * scratch for 2 nfft doubles (re is its first half). */
static double periodogram(const double *t, const double *v, size_t n, double *g, size_t nfft)
{
	double T = t[n - 1] - t[0], dt = T / (double)(n - 1), mean = 0;
	double *re = g, *im = g + nfft;
	size_t j = 0;
	for (size_t k = 0; k < n; k++) { /* linear interpolation onto the even grid */
		double tk = t[0] + dt * (double)k;
		while (j + 1 < n - 1 && t[j + 1] < tk)
			j++;
		double u = (tk - t[j]) / (t[j + 1] - t[j]);
		re[k] = v[j] + fmin(fmax(u, 0), 1) * (v[j + 1] - v[j]);
		mean += re[k];
	}
	mean /= (double)n;
	for (size_t k = 0; k < nfft; k++) {
		re[k] = k < n ? (re[k] - mean) * 0.5 * (1 - cos(2 * WL_PI * (double)k / (double)(n - 1))) : 0;
		im[k] = 0;
	}
	fft(re, im, nfft);
	for (size_t k = 0; k <= nfft / 2; k++)
		re[k] = re[k] * re[k] + im[k] * im[k];
	return dt;
}

/* Frequency of the highest periodogram ordinate in [f_lo, f_hi] (bins at
 * most 1/(2T) apart; the window's main lobe is 4/T wide, so the grid maximum
 * lies in the peak's lobe). */
static double periodogram_peak(const double *t, const double *v, size_t n, double f_lo, double f_hi,
                               double *g, size_t nfft)
{
	double dt = periodogram(t, v, n, g, nfft), best = -1, fbest = NAN;
	for (size_t k = 1; k <= nfft / 2; k++) {
		double f = (double)k / ((double)nfft * dt);
		if (f >= f_lo && f <= f_hi && g[k] > best) {
			best = g[k];
			fbest = f;
		}
	}
	return fbest;
}

/* The finite samples of (t_in, v_in) in increasing time, into t and v. */
static size_t usable(const double *t_in, const double *v_in, size_t n_in, double *t, double *v)
{
	size_t n = 0;
	for (size_t i = 0; i < n_in; i++)
		if (isfinite(t_in[i]) && isfinite(v_in[i]) && (n == 0 || t_in[i] > t[n - 1])) {
			t[n] = t_in[i];
			v[n++] = v_in[i];
		}
	return n;
}

wl_status wl_measure_periodogram(const double *t_in, const double *v_in, size_t n_in, double *f_hz,
                                 double *power, size_t cap, size_t *nbins, wl_err *err)
{
	double *t = malloc((n_in + 1) * sizeof *t), *v = malloc((n_in + 1) * sizeof *v), *g = NULL, dt;
	size_t n, nfft = 16, k;
	wl_status st = WL_OK;
	*nbins = 0;
	while (nfft < 2 * n_in)
		nfft <<= 1;
	g = malloc(2 * nfft * sizeof *g);
	if (!t || !v || !g) {
		st = wl_err_set(err, WL_ENOMEM, "periodogram: out of memory for %zu samples", n_in);
		goto out;
	}
	n = usable(t_in, v_in, n_in, t, v);
	if (n < 16) {
		st = wl_err_set(err, WL_EINVAL, "periodogram: %zu usable samples: give at least 16", n);
		goto out;
	}
	dt = periodogram(t, v, n, g, nfft);
	for (k = 1; k <= nfft / 2 && *nbins < cap; k++) {
		f_hz[*nbins] = (double)k / ((double)nfft * dt);
		power[(*nbins)++] = g[k];
	}
out:
	free(t);
	free(v);
	free(g);
	return st;
}

wl_status wl_measure_oscillation(const double *t_in, const double *v_in, size_t n_in, double f_lo,
                                 double f_hi, wl_osc *out, wl_err *err)
{
	double *t = NULL, *v = NULL, *g = NULL, T, f0, lo, hi, coef[5], tss = 0, mean = 0, rss;
	size_t n = 0, nfft = 16;
	wl_status st = WL_OK;
	out->freq_hz = out->amp = out->phase_rad = out->r2 = NAN;
	t = malloc((n_in + 1) * sizeof *t);
	v = malloc((n_in + 1) * sizeof *v);
	while (nfft < 2 * n_in)
		nfft <<= 1;
	g = malloc(2 * nfft * sizeof *g);
	if (!t || !v || !g) {
		st = wl_err_set(err, WL_ENOMEM, "oscillation: out of memory for %zu samples", n_in);
		goto out;
	}
	n = usable(t_in, v_in, n_in, t, v);
	if (n < 16) {
		st = wl_err_set(err, WL_EINVAL, "oscillation: %zu usable samples: give at least 16", n);
		goto out;
	}
	T = t[n - 1] - t[0];
	if (!(f_lo > 0) || !(f_hi > f_lo)) {
		st = wl_err_set(err, WL_EINVAL, "oscillation: empty frequency band [%g, %g] Hz", f_lo, f_hi);
		goto out;
	}
	f0 = periodogram_peak(t, v, n, f_lo, f_hi, g, nfft);
	if (!isfinite(f0)) {
		st = wl_err_set(err, WL_EINVAL, "oscillation: no periodogram peak in [%g, %g] Hz", f_lo,
		                f_hi);
		goto out;
	}
	/* golden-section search of the sine fit's RSS within half a bin */
	lo = fmax(f_lo, f0 - 0.5 / T);
	hi = fmin(f_hi, f0 + 0.5 / T);
	{
		const double r = 0.6180339887498949;
		double a = lo, b = hi, c = b - r * (b - a), d = a + r * (b - a);
		double fc = sine_rss(t, v, n, c, t[0], g, NULL), fd = sine_rss(t, v, n, d, t[0], g, NULL);
		for (int it = 0; it < 60 && b - a > 1e-5 * f0; it++) {
			if (fc < fd) {
				b = d, d = c, fd = fc;
				c = b - r * (b - a);
				fc = sine_rss(t, v, n, c, t[0], g, NULL);
			} else {
				a = c, c = d, fc = fd;
				d = a + r * (b - a);
				fd = sine_rss(t, v, n, d, t[0], g, NULL);
			}
		}
		f0 = 0.5 * (a + b);
	}
	rss = sine_rss(t, v, n, f0, t[0], g, coef);
	for (size_t i = 0; i < n; i++)
		mean += v[i];
	mean /= (double)n;
	for (size_t i = 0; i < n; i++)
		tss += (v[i] - mean) * (v[i] - mean);
	out->freq_hz = f0;
	out->amp = hypot(coef[1], coef[2]);
	/* a cos + b sin = amp sin(θ + φ) with φ = atan2(a, b), θ measured from t[0] */
	out->phase_rad = wl_wrap_pi(atan2(coef[1], coef[2]) - 2 * WL_PI * f0 * t[0]);
	out->r2 = tss > 0 ? 1 - rss / tss : NAN;
out:
	free(t);
	free(v);
	free(g);
	return st;
}

/* ---- helpers over one run ------------------------------------------------ */

/* Subtracts the least-squares polynomial of degree 2 in t (NaN samples kept). */
static void detrend_quadratic(const double *t, double *v, size_t n)
{
	double A[9] = {0}, b[3] = {0}, t0 = NAN, t1 = NAN, tm, ts;
	for (size_t i = 0; i < n; i++)
		if (isfinite(v[i])) {
			if (!isfinite(t0))
				t0 = t[i];
			t1 = t[i];
		}
	if (!isfinite(t0) || !(t1 > t0))
		return;
	tm = 0.5 * (t0 + t1), ts = 0.5 * (t1 - t0);
	for (size_t i = 0; i < n; i++) {
		if (!isfinite(v[i]))
			continue;
		double u = (t[i] - tm) / ts, r[3] = {1, u, u * u};
		for (int j = 0; j < 3; j++) {
			b[j] += r[j] * v[i];
			for (int k = 0; k < 3; k++)
				A[3 * j + k] += r[j] * r[k];
		}
	}
	if (!wl_solve(A, b, 3))
		return;
	for (size_t i = 0; i < n; i++)
		if (isfinite(v[i])) {
			double u = (t[i] - tm) / ts;
			v[i] -= b[0] + b[1] * u + b[2] * u * u;
		}
}

/* Unwraps a series of angles in place (NaN samples skipped). */
static void unwrap(double *a, size_t n)
{
	double prev = NAN, off = 0;
	for (size_t i = 0; i < n; i++) {
		if (!isfinite(a[i]))
			continue;
		if (isfinite(prev))
			off += wl_wrap_pi(a[i] + off - prev) - (a[i] + off - prev);
		a[i] += off;
		prev = a[i];
	}
}

/* Least-squares slope of v on t over the finite samples. */
static double slope(const double *t, const double *v, size_t n)
{
	double st = 0, sv = 0, stt = 0, stv = 0, m = 0;
	for (size_t i = 0; i < n; i++)
		if (isfinite(v[i]))
			st += t[i], sv += v[i], m++;
	if (m < 2)
		return NAN;
	st /= m, sv /= m;
	for (size_t i = 0; i < n; i++)
		if (isfinite(v[i])) {
			stt += (t[i] - st) * (t[i] - st);
			stv += (t[i] - st) * (v[i] - sv);
		}
	return stt > 0 ? stv / stt : NAN;
}

static void mean_sd(const double *v, size_t n, double *mean, double *sd)
{
	double s = 0, ss = 0, m = 0;
	*mean = *sd = NAN;
	if (!v)
		return;
	for (size_t i = 0; i < n; i++)
		if (isfinite(v[i]))
			s += v[i], m++;
	if (m < 1)
		return;
	*mean = s / m;
	for (size_t i = 0; i < n; i++)
		if (isfinite(v[i]))
			ss += (v[i] - *mean) * (v[i] - *mean);
	*sd = m > 1 ? sqrt(ss / (m - 1)) : NAN;
}

/* Path length, net displacement, straightness, speed, yaw rate, drift. */
static void path_measures(const wl_measure_input *in, const double *x, const double *y, size_t m,
                          wl_measure_result *r, double *hd)
{
	double len = 0;
	for (size_t i = 1; i < m; i++)
		len += hypot(x[i] - x[i - 1], y[i] - y[i - 1]);
	r->path_length_m = len;
	r->net_displacement_m = hypot(x[m - 1] - x[0], y[m - 1] - y[0]);
	r->straightness = len > 0 ? r->net_displacement_m / len : NAN;
	mean_sd(in->speed_mps, in->n, &r->mean_speed_mps, &r->speed_sd_mps);
	if (!isfinite(r->mean_speed_mps) && r->duration_s > 0)
		r->mean_speed_mps = len / r->duration_s;
	if (in->yaw_rate_radps) {
		double sd;
		mean_sd(in->yaw_rate_radps, in->n, &r->mean_yaw_rate_degps, &sd);
		r->mean_yaw_rate_degps /= WL_DEG;
	}
	for (size_t i = 0; i < in->n; i++)
		hd[i] = in->heading_rad ? in->heading_rad[i] : NAN;
	unwrap(hd, in->n);
	r->heading_drift_degps = slope(in->t_s, hd, in->n) / WL_DEG;
	if (!isfinite(r->mean_yaw_rate_degps)) {
		double first = NAN, last = NAN, tf = 0, tl = 0;
		for (size_t i = 0; i < in->n; i++)
			if (isfinite(hd[i])) {
				if (!isfinite(first))
					first = hd[i], tf = in->t_s[i];
				last = hd[i], tl = in->t_s[i];
			}
		if (tl > tf)
			r->mean_yaw_rate_degps = (last - first) / (tl - tf) / WL_DEG;
	}
}

/* Band searched for oscillations. */
static void osc_band(const wl_measure_opts *opt, const wl_measure_result *r, double *lo, double *hi)
{
	*lo = isfinite(opt->osc_fmin_hz) ? opt->osc_fmin_hz : fmax(3 / r->duration_s, 0.05);
	*hi = opt->osc_fmax_hz;
	if (!isfinite(*hi))
		*hi = 0.8 * 0.5 * (double)(r->n_used - 1) / r->duration_s;
}

/* A clear sway oscillation to fit with the circle: at least 10 cycles,
 * explaining at least 20% of the offsets' variance, so that red noise near
 * zero frequency is never taken for one.  Returns 0 when there is none. */
static int find_sway(const double *t, const double *x, const double *y, size_t m, const wl_geofit *gf,
                     double f_lo, double f_hi, double *scratch, wl_osc *o)
{
	for (size_t i = 0; i < m; i++)
		scratch[i] = wl_measure_geofit_offset(gf, x[i], y[i]);
	detrend_quadratic(t, scratch, m);
	return wl_measure_oscillation(t, scratch, m, fmax(f_lo, 10 / (t[m - 1] - t[0])), f_hi, o, NULL) ==
	               WL_OK &&
	       o->r2 >= 0.2;
}

/* The circle, its uncertainty and the straight rule. */
static void circle_measures(const double *t, const double *x, const double *y, size_t m,
                            const wl_measure_opts *opt, int values_only, wl_measure_result *r, wl_geofit *gf,
                            double *scratch)
{
	wl_circle c;
	wl_osc o;
	double se, f_lo, f_hi;
	if (wl_measure_fit_taubin(x, y, m, &c, NULL) == WL_OK)
		r->radius_taubin_m = c.r_m;
	if (wl_measure_fit_kasa(x, y, m, &c, NULL) == WL_OK)
		r->radius_kasa_m = c.r_m;
	if (wl_measure_fit_geometric(x, y, m, gf, NULL) != WL_OK) {
		gf->kappa_per_m = NAN;
		return;
	}
	osc_band(opt, r, &f_lo, &f_hi);
	if (find_sway(t, x, y, m, gf, f_lo, f_hi, scratch, &o)) {
		/* amp·sin(ωt + φ) = amp·sin φ·cos ωt + amp·cos φ·sin ωt */
		wl_geofit g2;
		if (wl_measure_fit_geometric_sway(x, y, t, m, o.freq_hz, o.amp * sin(o.phase_rad),
		                                  o.amp * cos(o.phase_rad), &g2, NULL) == WL_OK)
			*gf = g2;
	}
	r->curvature_per_m = gf->kappa_per_m;
	r->fit_rms_m = gf->rms_m;
	r->arc_deg =
	        gf->kappa_per_m != 0 ? fabs(wl_measure_swept_angle(x, y, m, gf->cx_m, gf->cy_m)) / WL_DEG : 0;
	if (values_only)
		return;
	if (wl_measure_curvature_se(x, y, t, m, gf, &se, &r->ar_order, NULL) == WL_OK) {
		double q = 1.959964;
		r->curvature_se_per_m = se;
		r->curvature_ci95_per_m[0] = gf->kappa_per_m - q * se;
		r->curvature_ci95_per_m[1] = gf->kappa_per_m + q * se;
	}
	r->straight = !(r->arc_deg >= opt->min_arc_deg) ||
	              !(r->curvature_ci95_per_m[0] > 0 || r->curvature_ci95_per_m[1] < 0);
	if (!r->straight) {
		r->radius_m = 1 / gf->kappa_per_m;
		r->centre_x_m = gf->cx_m;
		r->centre_y_m = gf->cy_m;
		if (opt->body_diameter_m > 0)
			r->radius_body_diameters = fabs(r->radius_m) / opt->body_diameter_m;
	}
}

/* ---- the fit's standard errors of the other measures ---------------------- */

/* Standard error of the mean of the finite values of v, for an
 * autocorrelated series (the AR residual model of measure_priv.h). */
static double mean_se(const double *v, size_t n)
{
	double *J = malloc((n ? n : 1) * sizeof *J), *r = malloc((n ? n : 1) * sizeof *r), mean = 0, C;
	size_t m = 0;
	if (!J || !r) {
		free(J);
		free(r);
		return NAN;
	}
	for (size_t i = 0; i < n; i++)
		if (isfinite(v[i]))
			mean += v[i], r[m++] = v[i];
	mean /= (double)(m ? m : 1);
	for (size_t i = 0; i < m; i++) {
		r[i] -= mean;
		J[i] = 1;
	}
	C = m >= 20 && wl_measure_sandwich(J, r, m, 1, &C) >= 0 ? sqrt(C) : NAN;
	free(J);
	free(r);
	return C;
}

/* Standard error of the straightness D / L of the m positions, from the
 * lateral offsets off[] of the positions from the mean path, read as an
 * autocorrelated noise: to first order a lateral move e_i of position i
 * changes it by g_i e_i, with g_i = (dD/dp_i - S dL/dp_i) / L along the
 * normal of the path there (dL/dp_i = u_i - u_(i+1), the unit steps; dD/dp
 * is the unit chord at the ends), so its variance is g' Γ g. */
static double straightness_se(const double *x, const double *y, size_t m, const double *off, double S,
                              double L)
{
	double *g = malloc((m ? m : 1) * sizeof *g), Om, cx, cy, cl;
	int ok;
	if (!g || m < 20 || !(L > 0)) {
		free(g);
		return NAN;
	}
	cx = x[m - 1] - x[0], cy = y[m - 1] - y[0], cl = hypot(cx, cy);
	for (size_t i = 0; i < m; i++) {
		double ux0 = 0, uy0 = 0, ux1 = 0, uy1 = 0, gx, gy, nx, ny, d;
		size_t a = i ? i - 1 : i, b = i + 1 < m ? i + 1 : i;
		if (i > 0 && (d = hypot(x[i] - x[i - 1], y[i] - y[i - 1])) > 0)
			ux0 = (x[i] - x[i - 1]) / d, uy0 = (y[i] - y[i - 1]) / d;
		if (i + 1 < m && (d = hypot(x[i + 1] - x[i], y[i + 1] - y[i])) > 0)
			ux1 = (x[i + 1] - x[i]) / d, uy1 = (y[i + 1] - y[i]) / d;
		gx = -S * (ux0 - ux1), gy = -S * (uy0 - uy1);
		if (cl > 0 && i == 0)
			gx -= cx / cl, gy -= cy / cl;
		if (cl > 0 && i == m - 1)
			gx += cx / cl, gy += cy / cl;
		/* the normal: left of the local direction of travel */
		d = hypot(x[b] - x[a], y[b] - y[a]);
		nx = d > 0 ? -(y[b] - y[a]) / d : 0, ny = d > 0 ? (x[b] - x[a]) / d : 0;
		g[i] = (gx * nx + gy * ny) / L;
	}
	ok = wl_measure_ar_quadform(g, off, m, 1, &Om) >= 0;
	free(g);
	return ok ? sqrt(fmax(Om, 0)) : NAN;
}

/* Standard errors of the amplitude and frequency of the sine fit o of v(t)
 * (NaN samples skipped): the sandwich of the fit c0 + c1 u + c2 u² + A
 * sin(2π f (t - tm) + φ) (u = (t - tm) / ts over the span, the trend fitted
 * jointly as in wl_measure_oscillation) in (c0, c1, c2, A, φ, f) with the
 * AR model of its residuals. */
static void osc_se(const double *t, const double *v, size_t n, const wl_osc *o, double *se_amp, double *se_f)
{
	double *J = malloc(6 * (n ? n : 1) * sizeof *J), *r = malloc((n ? n : 1) * sizeof *r), C[36],
	       N[9] = {0}, c[3] = {0}, tm = NAN, t1 = NAN, ts, ph, w = 2 * WL_PI * o->freq_hz;
	size_t m = 0;
	*se_amp = *se_f = NAN;
	if (!J || !r || !isfinite(o->freq_hz) || !isfinite(o->amp))
		goto out;
	for (size_t i = 0; i < n; i++)
		if (isfinite(v[i])) {
			if (!isfinite(tm))
				tm = t[i];
			t1 = t[i];
		}
	ts = 0.5 * (t1 - tm);
	tm = 0.5 * (tm + t1);
	if (!(ts > 0))
		goto out;
	ph = o->phase_rad + w * tm; /* the phase at tm */
	/* the trend under the fitted sine */
	for (size_t i = 0; i < n; i++)
		if (isfinite(v[i])) {
			double u = (t[i] - tm) / ts, q[3] = {1, u, u * u},
			       e = v[i] - o->amp * sin(w * (t[i] - tm) + ph);
			for (int j = 0; j < 3; j++) {
				c[j] += q[j] * e;
				for (int k = 0; k < 3; k++)
					N[3 * j + k] += q[j] * q[k];
			}
			m++;
		}
	if (m < 20 || !wl_solve(N, c, 3))
		goto out;
	m = 0;
	for (size_t i = 0; i < n; i++) {
		double th, s, co, u, *j;
		if (!isfinite(v[i]))
			continue;
		th = w * (t[i] - tm) + ph, s = sin(th), co = cos(th), u = (t[i] - tm) / ts, j = J + 6 * m;
		j[0] = 1, j[1] = u, j[2] = u * u, j[3] = s, j[4] = o->amp * co;
		j[5] = o->amp * co * 2 * WL_PI * (t[i] - tm);
		r[m++] = v[i] - c[0] - c[1] * u - c[2] * u * u - o->amp * s;
	}
	if (wl_measure_sandwich(J, r, m, 6, C) >= 0) {
		*se_amp = sqrt(fmax(C[3 * 6 + 3], 0));
		*se_f = sqrt(fmax(C[5 * 6 + 5], 0));
	}
out:
	free(J);
	free(r);
}

/* Fills the fit's entry of each measure's budget, the totals (the fit alone
 * so far) and the 95% intervals; wl_measure_budget adds the systematic
 * sources. */
static void fit_budget(wl_measure_result *r, double se_speed, double se_straight, double se_amp_deg,
                       double se_f)
{
	double se[WL_BM_N] = {r->curvature_se_per_m, NAN, se_speed, se_amp_deg, se_f, se_straight};
	if (!r->straight && isfinite(r->curvature_se_per_m))
		se[WL_BM_RADIUS] = r->curvature_se_per_m / (r->curvature_per_m * r->curvature_per_m);
	for (int k = 0; k < WL_BM_N; k++) {
		r->budget[k].se[WL_BS_FIT] = se[k];
		r->budget[k].total_se = se[k];
	}
	wl_measure_set_intervals(r);
}

void wl_measure_set_intervals(wl_measure_result *r)
{
	const double q = 1.959964;
	struct {
		double v, *ci;
		int k;
	} iv[] = {{r->curvature_per_m, r->curvature_ci95_per_m, WL_BM_CURVATURE},
	          {r->mean_speed_mps, r->mean_speed_ci95_mps, WL_BM_SPEED},
	          {r->yaw_osc_amp_deg, r->yaw_osc_amp_ci95_deg, WL_BM_YAW_AMP},
	          {r->yaw_osc_freq_hz, r->yaw_osc_freq_ci95_hz, WL_BM_YAW_FREQ},
	          {r->straightness, r->straightness_ci95, WL_BM_STRAIGHTNESS}};
	for (size_t i = 0; i < sizeof iv / sizeof iv[0]; i++) {
		double se = r->budget[iv[i].k].total_se;
		iv[i].ci[0] = isfinite(se) ? iv[i].v - q * se : NAN;
		iv[i].ci[1] = isfinite(se) ? iv[i].v + q * se : NAN;
	}
	if (isfinite(r->curvature_se_per_m))
		r->curvature_se_per_m = r->budget[WL_BM_CURVATURE].total_se;
	/* the radius's interval is the curvature's, inverted (exact, asymmetric) */
	r->radius_ci95_m[0] = r->radius_ci95_m[1] = NAN;
	if (!r->straight && (r->curvature_ci95_per_m[0] > 0 || r->curvature_ci95_per_m[1] < 0)) {
		r->radius_ci95_m[0] = 1 / r->curvature_ci95_per_m[1];
		r->radius_ci95_m[1] = 1 / r->curvature_ci95_per_m[0];
	}
}

/* The yaw about the mean path (circle, or line when straight) and the
 * lateral offset from it, per row, unwrapped and detrended as analysed;
 * raw_off (may be NULL) receives the offsets before detrending. */
static void osc_series(const wl_measure_input *in, const wl_geofit *gf, const wl_measure_result *r,
                       double *sway, double *yaw, double *raw_off)
{
	double ux = NAN, uy = NAN, mx = 0, my = 0, m = 0;
	const double *hsrc = in->heading_rad;
	size_t nh = 0, nhm = 0;
	/* the detections' own headings where they cover at least half the rows
	 * with a heading: a smoother attenuates an oscillation near its
	 * bandwidth (by a fifth at 2.7 Hz in 15 fps clips), a least-squares
	 * sine through the detections does not */
	for (size_t i = 0; hsrc && in->heading_meas_rad && i < in->n; i++) {
		nh += isfinite(in->heading_rad[i]);
		nhm += isfinite(in->heading_meas_rad[i]);
	}
	if (nh > 0 && 2 * nhm >= nh)
		hsrc = in->heading_meas_rad;
	if (r->straight) { /* total-least-squares line through the positions */
		double a[4] = {0}, ev[2], vec[4], fx = NAN, fy = NAN, lx = NAN, ly = NAN;
		for (size_t i = 0; i < in->n; i++)
			if (isfinite(in->x_m[i]) && isfinite(in->y_m[i])) {
				mx += in->x_m[i], my += in->y_m[i], m++;
				if (!isfinite(fx))
					fx = in->x_m[i], fy = in->y_m[i];
				lx = in->x_m[i], ly = in->y_m[i];
			}
		mx /= m, my /= m;
		for (size_t i = 0; i < in->n; i++)
			if (isfinite(in->x_m[i]) && isfinite(in->y_m[i])) {
				double X = in->x_m[i] - mx, Y = in->y_m[i] - my;
				a[0] += X * X, a[1] += X * Y, a[3] += Y * Y;
			}
		a[2] = a[1];
		wl_sym_eig(a, 2, ev, vec);
		ux = vec[1], uy = vec[3];
		if (ux * (lx - fx) + uy * (ly - fy) < 0)
			ux = -ux, uy = -uy;
	}
	for (size_t i = 0; i < in->n; i++) {
		double X = in->x_m[i], Y = in->y_m[i], h = hsrc ? hsrc[i] : NAN, expect;
		if (!isfinite(X) || !isfinite(Y)) {
			sway[i] = yaw[i] = NAN;
			continue;
		}
		if (r->straight) {
			sway[i] = -(X - mx) * uy + (Y - my) * ux;
			expect = atan2(uy, ux);
		} else {
			sway[i] = wl_measure_geofit_offset(gf, X, Y);
			expect = atan2(Y - gf->cy_m, X - gf->cx_m) +
			         (gf->kappa_per_m > 0 ? WL_PI / 2 : -WL_PI / 2);
		}
		yaw[i] = isfinite(h) ? wl_wrap_pi(h - expect) : NAN;
	}
	if (raw_off)
		memcpy(raw_off, sway, in->n * sizeof *sway);
	unwrap(yaw, in->n);
	detrend_quadratic(in->t_s, yaw, in->n);
	detrend_quadratic(in->t_s, sway, in->n);
}

/* Yaw and sway oscillation about the mean path. */
static void oscillation_measures(const wl_measure_input *in, const wl_measure_opts *opt, int values_only,
                                 const wl_geofit *gf, wl_measure_result *r, double *sway, double *yaw,
                                 double *raw_off, double *se_amp_deg, double *se_f)
{
	double f_lo, f_hi;
	wl_osc o;
	osc_series(in, gf, r, sway, yaw, raw_off);
	osc_band(opt, r, &f_lo, &f_hi);
	if (wl_measure_oscillation(in->t_s, yaw, in->n, f_lo, f_hi, &o, NULL) == WL_OK) {
		double se_amp;
		r->yaw_osc_freq_hz = o.freq_hz;
		r->yaw_osc_amp_deg = o.amp / WL_DEG;
		r->yaw_osc_r2 = o.r2;
		if (!values_only) {
			osc_se(in->t_s, yaw, in->n, &o, &se_amp, se_f);
			*se_amp_deg = se_amp / WL_DEG;
		}
	}
	if (!values_only && wl_measure_oscillation(in->t_s, sway, in->n, f_lo, f_hi, &o, NULL) == WL_OK) {
		r->sway_osc_freq_hz = o.freq_hz;
		r->sway_amp_m = o.amp;
	}
}

/* wl_measure_run, and with yaw_out / off_out (in->n values each, may be
 * NULL) the series behind the oscillation measures. */
static wl_status run_core(const wl_measure_input *in, const wl_measure_opts *opt, int values_only,
                          wl_measure_result *r, double *yaw_out, double *off_out, wl_err *err)
{
	double *x = NULL, *y = NULL, *tc = NULL, *hd = NULL, *sway = NULL, *yaw = NULL;
	size_t m = 0;
	wl_geofit gf;
	wl_status st = WL_OK;
	wl_summary_measures_init(r);
	r->n_rows = in->n;
	if (in->n < 5)
		return wl_err_set(err, WL_EINVAL, "run of %zu rows: give at least 5", in->n);
	for (size_t i = 1; i < in->n; i++)
		if (!(in->t_s[i] > in->t_s[i - 1]))
			return wl_err_set(err, WL_EINVAL,
			                  "t_s %.6f at row %zu is not after %.6f: sort by time", in->t_s[i],
			                  i, in->t_s[i - 1]);
	x = malloc(in->n * sizeof *x);
	y = malloc(in->n * sizeof *y);
	tc = malloc(in->n * sizeof *tc);
	hd = malloc(in->n * sizeof *hd);
	sway = malloc(in->n * sizeof *sway);
	yaw = malloc(in->n * sizeof *yaw);
	if (!x || !y || !tc || !hd || !sway || !yaw) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory for a run of %zu rows", in->n);
		goto out;
	}
	for (size_t i = 0; i < in->n; i++) {
		if (in->measured && in->measured[i])
			r->n_measured++;
		if (isfinite(in->x_m[i]) && isfinite(in->y_m[i])) {
			tc[m] = in->t_s[i];
			x[m] = in->x_m[i];
			y[m++] = in->y_m[i];
		}
	}
	r->n_used = m;
	if (m < 5) {
		st = wl_err_set(err, WL_EINVAL, "run of %zu rows has %zu positions: give at least 5", in->n,
		                m);
		goto out;
	}
	r->t_start_s = in->t_s[0];
	r->duration_s = in->t_s[in->n - 1] - in->t_s[0];
	r->tracked_fraction = (double)r->n_measured / (double)in->n;
	path_measures(in, x, y, m, r, hd);
	circle_measures(tc, x, y, m, opt, values_only, r, &gf, sway);
	if (isfinite(gf.kappa_per_m)) {
		double se_amp = NAN, se_f = NAN, se_s;
		oscillation_measures(in, opt, values_only, &gf, r, sway, yaw, off_out, &se_amp, &se_f);
		if (yaw_out)
			memcpy(yaw_out, yaw, in->n * sizeof *yaw);
		if (values_only)
			goto out;
		/* the lateral offsets from the mean path, for the straightness */
		for (size_t i = 0, k = 0; i < in->n; i++)
			if (isfinite(in->x_m[i]) && isfinite(in->y_m[i]))
				hd[k++] = isfinite(sway[i]) ? sway[i] : 0;
		se_s = straightness_se(x, y, m, hd, r->straightness, r->path_length_m);
		fit_budget(r, in->speed_mps ? mean_se(in->speed_mps, in->n) : NAN, se_s, se_amp, se_f);
	}
out:
	free(x);
	free(y);
	free(tc);
	free(hd);
	free(sway);
	free(yaw);
	return st;
}

wl_status wl_measure_run(const wl_measure_input *in, const wl_measure_opts *opt, wl_measure_result *r,
                         wl_err *err)
{
	return run_core(in, opt, 0, r, NULL, NULL, err);
}

wl_status wl_measure_run_values(const wl_measure_input *in, const wl_measure_opts *opt, wl_measure_result *r,
                                wl_err *err)
{
	return run_core(in, opt, 1, r, NULL, NULL, err);
}

wl_status wl_measure_run_series(const wl_measure_input *in, const wl_measure_opts *opt, wl_measure_result *r,
                                double *yaw_rad, double *offset_m, wl_err *err)
{
	for (size_t i = 0; i < in->n; i++)
		yaw_rad[i] = offset_m[i] = NAN;
	return run_core(in, opt, 0, r, yaw_rad, offset_m, err);
}
