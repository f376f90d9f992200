/*
 * scale.c: the pure parts of the plotting layer: tick positions on linear
 * and symmetric-log axes, tick labels, the viridis colour map and the group
 * palette.  No cairo here, so the tests can check them directly.
 */
#include "report/report.h"

#include <math.h>
#include <string.h>

#include "core/csvio.h"

/* The 1-2-5 step no smaller than raw (Heckbert 1990). */
static double nice_step(double raw)
{
	double e = floor(log10(raw));
	double p = pow(10.0, e);
	double f = raw / p;
	double s = f <= 1.0 ? 1.0 : f <= 2.0 ? 2.0 : f <= 5.0 ? 5.0 : 10.0;
	return s * p;
}

size_t wl_ticks_linear(double lo, double hi, size_t max_ticks, double *out, size_t cap)
{
	double step, span;
	size_t n = 0;
	long k, k0, k1;

	if (!isfinite(lo) || !isfinite(hi) || cap == 0)
		return 0;
	if (lo > hi) {
		double t = lo;
		lo = hi;
		hi = t;
	}
	if (max_ticks < 2)
		max_ticks = 2;
	span = hi - lo;
	if (span <= 0) {
		out[0] = lo;
		return 1;
	}
	/* the densest 1-2-5 step whose ticks fit: start below and grow */
	step = nice_step(span / (double)(2 * max_ticks));
	for (;;) {
		k0 = (long)ceil(lo / step - 1e-9);
		k1 = (long)floor(hi / step + 1e-9);
		if ((size_t)(k1 - k0 + 1) <= max_ticks)
			break;
		step = nice_step(step * 1.01);
	}
	/* a short range between two coarse ticks: refine so that at least two show */
	while (k1 - k0 + 1 < 2) {
		double e = pow(10.0, floor(log10(step) + 1e-12)), f = step / e;
		step = f > 4.5 ? 2 * e : f > 1.5 ? e : 0.5 * e;
		k0 = (long)ceil(lo / step - 1e-9);
		k1 = (long)floor(hi / step + 1e-9);
	}
	for (k = k0; k <= k1 && n < cap; k++) {
		double v = (double)k * step;
		if (fabs(v) < step * 1e-9)
			v = 0.0;
		out[n++] = v;
	}
	return n;
}

static const double SYMLOG_A = 1.0 / (1.0 - 0.1); /* linscale 1, base 10 */

double wl_symlog(double v, double c)
{
	double a = fabs(v);
	if (a <= c)
		return v * SYMLOG_A;
	return copysign(c * (SYMLOG_A + log10(a / c)), v);
}

double wl_symlog_inv(double s, double c)
{
	double a = fabs(s);
	if (a <= c * SYMLOG_A)
		return s / SYMLOG_A;
	return copysign(c * pow(10.0, a / c - SYMLOG_A), s);
}

/* Ticks at round decades (+-0.1, +-1, +-10 m), not at multiples of the
 * threshold: the threshold is a body diameter such as 0.14 m, and ticks at
 * 0.14, 1.4, 14 read badly.  Decades below a third of the threshold would
 * crowd 0 on the linear part and are left out. */
size_t wl_ticks_symlog(double lo, double hi, double c, size_t max_ticks, double *out, size_t cap)
{
	double amax;
	int kmin, kmax, every = 1, k;
	size_t n = 0, i, j;
	double tmp[WL_TICKS_MAX];

	if (!isfinite(lo) || !isfinite(hi) || !(c > 0) || cap == 0)
		return 0;
	if (lo > hi) {
		double t = lo;
		lo = hi;
		hi = t;
	}
	if (max_ticks < 3)
		max_ticks = 3;
	amax = fmax(fabs(lo), fabs(hi));
	if (amax <= c * 1.0000001)
		return wl_ticks_linear(lo, hi, max_ticks, out, cap);
	kmin = (int)ceil(log10(c / 3) - 1e-9);
	kmax = (int)floor(log10(amax) + 1e-9);
	if (kmax > 300)
		kmax = 300;
	if (kmin < kmax - 300)
		kmin = kmax - 300;
	/* count the ticks of a given thinning (decades k with k % every == 0,
	 * so that 1 stays) and thin until they fit */
	for (;;) {
		size_t cnt = (lo <= 0 && hi >= 0) ? 1 : 0;
		for (k = kmin; k <= kmax; k++) {
			double v = pow(10.0, k);
			if (k % every == 0)
				cnt += (v >= lo && v <= hi) + (-v >= lo && -v <= hi);
		}
		if (cnt <= max_ticks || every > kmax - kmin)
			break;
		every++;
	}
	for (k = kmax; k >= kmin && n < WL_TICKS_MAX; k--) {
		double v = -pow(10.0, k);
		if (k % every == 0 && v >= lo && v <= hi)
			tmp[n++] = v;
	}
	if (lo <= 0 && hi >= 0 && n < WL_TICKS_MAX)
		tmp[n++] = 0.0;
	for (k = kmin; k <= kmax && n < WL_TICKS_MAX; k++) {
		double v = pow(10.0, k);
		if (k % every == 0 && v >= lo && v <= hi)
			tmp[n++] = v;
	}
	for (i = 0, j = 0; i < n && j < cap; i++)
		out[j++] = tmp[i];
	return j;
}

/* viridis at t = 0, 0.1, ..., 1: entries round(25.5 k) of the published
 * 256-entry table (van der Walt & Smith; matplotlib's _cm_listed.py, CC0),
 * read from Debian's python3-matplotlib 3.6.3 */
static const double VIRIDIS[11][3] = {
        {0.267004, 0.004874, 0.329415}, {0.282290, 0.145912, 0.461510}, {0.253935, 0.265254, 0.529983},
        {0.206756, 0.371758, 0.553117}, {0.163625, 0.471133, 0.558148}, {0.127568, 0.566949, 0.550556},
        {0.134692, 0.658636, 0.517649}, {0.259857, 0.745492, 0.444467}, {0.477504, 0.821444, 0.318195},
        {0.741388, 0.873449, 0.149561}, {0.993248, 0.906157, 0.143936},
};

void wl_cmap_viridis(double t, double rgb[3])
{
	/* 11 knots at t = 0, 0.1, ..., 1 */
	const int nk = 11;
	double f;
	int i, k;
	if (isnan(t)) {
		rgb[0] = rgb[1] = rgb[2] = 0.6;
		return;
	}
	t = t < 0 ? 0 : t > 1 ? 1 : t;
	f = t * (nk - 1);
	i = (int)floor(f);
	if (i >= nk - 1)
		i = nk - 2;
	f -= i;
	for (k = 0; k < 3; k++)
		rgb[k] = VIRIDIS[i][k] * (1 - f) + VIRIDIS[i + 1][k] * f;
}

/* Okabe & Ito (2008), "Color universal design" */
static const unsigned char OKABE_ITO[8][3] = {
        {0, 114, 178},  {230, 159, 0}, {0, 158, 115},  {204, 121, 167},
        {86, 180, 233}, {213, 94, 0},  {240, 228, 66}, {0, 0, 0},
};

void wl_palette(size_t i, double rgb[3])
{
	int k;
	for (k = 0; k < 3; k++)
		rgb[k] = OKABE_ITO[i % 8][k] / 255.0;
}

char *wl_tick_label(char *buf, double v)
{
	int d, sig;
	double back;
	char tmp[WL_NUMBUF];
	if (v == 0 || fabs(v) < 1e-300) {
		strcpy(buf, "0");
		return buf;
	}
	/* plain decimals for everyday magnitudes: the fewest that give back v */
	if (fabs(v) >= 1e-4 && fabs(v) < 1e7) {
		for (d = 0; d <= 10; d++) {
			wl_fmt_fixed(tmp, v, d);
			if (wl_parse_double(tmp, &back) && fabs(back - v) <= 1e-9 * fabs(v))
				break;
		}
		if (d <= 10) {
			snprintf(buf, 32, "%s", tmp);
			return buf;
		}
	}
	for (sig = 1; sig < 6; sig++) {
		wl_fmt_g(tmp, v, sig);
		if (wl_parse_double(tmp, &back) && fabs(back - v) <= 1e-9 * fabs(v))
			break;
	}
	wl_fmt_g(tmp, v, sig);
	snprintf(buf, 32, "%s", tmp);
	return buf;
}
