/*
 * segment.c: the clean stage's cuts over one robot's smoothed track: the
 * motion onset, settling (the start trimmed to steady motion, a window of
 * one heading-oscillation period), the cut at the tank wall, and the
 * segments that are left (see docs/clean.md, "Trimming").
 */
#include "clean/clean.h"

#include <math.h>
#include <stdlib.h>

#include "core/angle.h"

#include "clean/clean_work.h"

/* the settling window is at most this many oscillation periods: longer
 * windows average noise better but a centred window over a speed-up is late
 * by about W^2 / (24 tau); 2 gave the smallest trim errors on the synthetic
 * runs of tests/e2e/0401 (18 seeds: |error| <= 0.27 s, period 0.5 s) */
#define SETTLE_MAX_MULT 2

/* Time-weighted mean of v over samples [i, j] (trapezoids). */
static double twmean(const work *w, const double *v, size_t i, size_t j)
{
	double s = 0, T = w->t[j] - w->t[i];
	if (j <= i)
		return v[i];
	for (size_t k = i; k < j; k++)
		s += 0.5 * (v[k] + v[k + 1]) * (w->t[k + 1] - w->t[k]);
	return s / T;
}

/* Moving-test window: the displacement of the smoothed position over this
 * time tells a moving robot from a still one.  Positions are far better
 * determined than instantaneous velocities (a noisy blob inflates the
 * smoother's velocity uncertainty long before its position uncertainty),
 * so a robot at 0.05 m/s is told from a still one even with 5 mm of noise. */
#define MOVE_WINDOW_S 1.0

/* Displacement speed over the window ending at each sample, within its
 * piece: |p(t) - p(t - T)| / T with T = MOVE_WINDOW_S (or the piece so far,
 * if shorter); thr receives the speed a still robot exceeds with
 * probability e^-12.5: 5 standard deviations of one component of the
 * displacement, sqrt(sp(t)^2 + sp(t - T)^2) / T (the correlation of the two
 * smoothed positions only lowers it), but at least min_speed.  NaN at a
 * piece's first sample. */
static void displacement_speed(const work *w, double min_speed, double *ds, double *thr)
{
	for (size_t q = 0; q < w->npieces; q++) {
		size_t a = w->pstart[q], b = w->pstart[q + 1], j = a;
		for (size_t i = a; i < b; i++) {
			double T;
			while (j + 1 < i && w->t[i] - w->t[j + 1] >= MOVE_WINDOW_S)
				j++;
			T = w->t[i] - w->t[j];
			if (i == a || !(T > 0)) {
				ds[i] = thr[i] = NAN;
				continue;
			}
			ds[i] = hypot(w->x[i] - w->x[j], w->y[i] - w->y[j]) / T;
			thr[i] = fmax(min_speed, 5 * hypot(w->sp[i], w->sp[j]) / T);
		}
	}
}

/* First sample from which the robot moves: its displacement speed (over
 * the window ending there) above the still threshold for at least 0.25 s
 * (common practice: a short hold rejects single noisy frames).  The window
 * ends at the sample, so the onset is late by at most thr / v of the window
 * (0.05 s for 2 mm of noise at 0.1 m/s), never early. */
static size_t find_onset(const work *w, const double *ds, const double *thr)
{
	size_t run = (size_t)-1;
	for (size_t i = 0; i < w->n; i++) {
		if (ds[i] > thr[i]) {
			if (run == (size_t)-1 || w->piece[i] != w->piece[run])
				run = i;
			if (w->t[i] - w->t[run] >= 0.25)
				return run;
		} else if (isfinite(ds[i])) {
			run = (size_t)-1;
		}
	}
	return (size_t)-1;
}

/* Period of the heading oscillation from upward zero crossings (with
 * hysteresis) of the yaw rate minus its mean over [a, b].  NaN if fewer than
 * three crossings or an amplitude within the noise. */
static double find_period(const work *w, size_t a, size_t b, double rmean)
{
	double rms = 0, hyst, last = NAN, *iv, per = NAN, srm = 0;
	size_t m = 0, cnt = 0, nrm = 0;
	int state = 0;
	if (b <= a + 4 || !isfinite(rmean))
		return NAN;
	for (size_t i = a; i <= b; i++)
		if (isfinite(w->r[i])) {
			rms += (w->r[i] - rmean) * (w->r[i] - rmean);
			srm += w->sr[i] * w->sr[i];
			nrm++;
		}
	if (nrm < 5)
		return NAN;
	rms = sqrt(rms / nrm);
	srm = sqrt(srm / nrm);
	if (rms < srm || rms < 1e-3)
		return NAN;
	hyst = 0.5 * rms;
	iv = malloc((b - a + 1) * sizeof *iv);
	if (!iv)
		return NAN;
	for (size_t i = a + 1; i <= b; i++) {
		double v = w->r[i] - rmean, v0 = w->r[i - 1] - rmean;
		if (!isfinite(v) || !isfinite(v0) || w->piece[i] != w->piece[i - 1])
			continue;
		if (v < -hyst)
			state = -1;
		if (v0 <= 0 && v > 0 && state == -1) {
			double tc = w->t[i - 1] + (w->t[i] - w->t[i - 1]) * (-v0) / (v - v0);
			if (isfinite(last))
				iv[m++] = tc - last;
			last = tc;
			cnt++;
			state = 1;
		}
	}
	if (cnt >= 3)
		per = clean_median(iv, m);
	free(iv);
	return per;
}

/* Integral of the piecewise-linear v from t[a] to time x (a <= k < n),
 * with the running prefix integral I; *k is a search hint. */
static double integ_at(const double *t, const double *v, const double *I, size_t n, double x, size_t *k)
{
	double f;
	while (*k + 1 < n - 1 && t[*k + 1] <= x)
		(*k)++;
	while (*k > 0 && t[*k] > x)
		(*k)--;
	f = x - t[*k];
	if (*k + 1 >= n)
		return I[*k];
	return I[*k] + f * (v[*k] + 0.5 * f * (v[*k + 1] - v[*k]) / (t[*k + 1] - t[*k]));
}

/* Linear interpolation of v at time x (t[0] <= x <= t[n-1]); *k a hint. */
static double interp_at(const double *t, const double *v, size_t n, double x, size_t *k)
{
	while (*k + 1 < n - 1 && t[*k + 1] <= x)
		(*k)++;
	while (*k > 0 && t[*k] > x)
		(*k)--;
	if (*k + 1 >= n)
		return v[*k];
	return v[*k] + (x - t[*k]) * (v[*k + 1] - v[*k]) / (t[*k + 1] - t[*k]);
}

/* Detections farther apart than this many typical frame steps make a gap
 * (two rejected detections in a row do not). */
#define WINDOW_GAP_STEPS 3.5

/* A window mean off by more than this many tolerances breaks a steady
 * stretch at once; a smaller excursion only when it lasts a quarter window. */
#define EXCURSION_MAX 1.5

/* Windows where the velocity or yaw rate is on average this many times less
 * certain than the track's median are not judged. */
#define SD_MAX_RATIO 1.5

/* Ratio over [t0, t1] (samples lo..pb) of the mean smoothed standard
 * deviations of the velocity and of the yaw rate to their track medians,
 * the larger of the two. */
static double sd_ratio(const work *w, size_t lo, size_t pb, double t0, double t1, double sv_med,
                       double sr_med)
{
	double sv = 0, sr = 0;
	size_t m = 0, mr = 0;
	for (size_t j = lo; j <= pb && w->t[j] <= t1; j++)
		if (w->t[j] >= t0) {
			sv += w->sv[j];
			m++;
			if (isfinite(w->sr[j])) {
				sr += w->sr[j];
				mr++;
			}
		}
	if (!m)
		return INFINITY;
	return fmax(sv / (double)m / sv_med, sr_med > 0 && mr ? sr / (double)mr / sr_med : 0);
}

/* Centred window means over [t - W/2, t + W/2] for samples a..b: the speed
 * (mv, the time average of spd) and the turning rate (mr, the change of the
 * unwrapped angle ang over the window / W: the exact mean of its rate; NaN
 * when ang is NULL).  A window is left out (NaN) unless it lies inside one
 * piece and its detections cover it (none farther apart, or from its ends,
 * than WINDOW_GAP_STEPS frame steps):
 * occlusions neither make nor break steadiness.  Windows where the
 * velocity or the yaw rate is on average much less certain than the track's
 * typical (sv_med, sr_med: the median smoothed standard deviations) are
 * left out too: inside a bridged gap the smoother only interpolates (the
 * heading's oscillation is lost there), and at a piece's first and last
 * samples it has data on one side only, so its speed and heading there
 * can be off by several per cent.  I is
 * scratch for the piece with the most samples. */
static void window_means(const work *w, const double *spd, const double *ang, size_t a, size_t b, double W,
                         double sv_med, double sr_med, double *I, double *mv, double *mr)
{
	for (size_t i = a; i <= b; i++)
		mv[i] = mr[i] = NAN;
	for (size_t q = 0; q < w->npieces; q++) {
		size_t pa = w->pstart[q] > a ? w->pstart[q] : a,
		       pb = w->pstart[q + 1] - 1 < b ? w->pstart[q + 1] - 1 : b;
		size_t n, k0 = 0, k1 = 0, h0 = 0, h1 = 0, lo = pa, lo2 = pa;
		double margin = WINDOW_GAP_STEPS * w->dt_med;
		if (w->pstart[q + 1] == 0 || pa > pb)
			continue;
		n = pb - pa + 1;
		I[0] = 0;
		for (size_t i = 1; i < n; i++)
			I[i] = I[i - 1] +
			       0.5 * (spd[pa + i] + spd[pa + i - 1]) * (w->t[pa + i] - w->t[pa + i - 1]);
		for (size_t i = pa; i <= pb; i++) {
			double t = w->t[i], hw = fmin(W / 2, fmin(t - w->t[pa], w->t[pb] - t)), t0 = t - hw,
			       t1 = t + hw, last, maxgap;
			if (hw < W / 2)
				continue;
			while (lo < i && w->t[lo] < t0)
				lo++;
			/* the detections (not rejected) must cover the window and a
			 * margin on either side: inside a gap the smoother only
			 * interpolates (the heading's oscillation is lost there), and
			 * next to one it lags */
			last = fmax(t0 - margin, w->t[pa]);
			maxgap = 0;
			while (lo2 < i && w->t[lo2] < t0 - margin)
				lo2++;
			for (size_t j = lo2; j <= pb && w->t[j] <= t1 + margin; j++) {
				if (!isfinite(w->zx[j]) || w->mpos[j] || w->t[j] < last)
					continue;
				maxgap = fmax(maxgap, w->t[j] - last);
				last = w->t[j];
			}
			maxgap = fmax(maxgap, fmin(t1 + margin, w->t[pb]) - last);
			if (maxgap > WINDOW_GAP_STEPS * w->dt_med ||
			    sd_ratio(w, lo, pb, t0, t1, sv_med, sr_med) > SD_MAX_RATIO)
				continue;
			mv[i] = (integ_at(w->t + pa, spd + pa, I, n, t1, &k1) -
			         integ_at(w->t + pa, spd + pa, I, n, t0, &k0)) /
			        W;
			if (ang)
				mr[i] = (interp_at(w->t + pa, ang + pa, n, t1, &h1) -
				         interp_at(w->t + pa, ang + pa, n, t0, &h0)) /
				        W;
		}
	}
}

/* Mean and 1.4826 MAD of the finite v[i] with t[i] in [t0, t1]. */
static void mean_mad(const work *w, const double *v, size_t a, size_t b, double t0, double *mean, double *mad)
{
	double *d = malloc((b - a + 1) * sizeof *d), s = 0;
	size_t m = 0;
	*mean = *mad = NAN;
	if (!d)
		return;
	for (size_t i = a; i <= b; i++)
		if (w->t[i] >= t0 && isfinite(v[i])) {
			s += v[i];
			d[m++] = v[i];
		}
	if (m) {
		*mean = s / (double)m;
		for (size_t i = 0; i < m; i++)
			d[i] = fabs(d[i] - *mean);
		*mad = 1.4826 * clean_median(d, m);
	}
	free(d);
}

/* Sample i is the first detection after a gap (a split, or detections
 * farther apart than WINDOW_GAP_STEPS frame steps). */
static int after_gap(const work *w, size_t i)
{
	size_t j = i;
	if (i == 0 || !isfinite(w->zx[i]))
		return 0;
	if (w->piece[i] != w->piece[i - 1])
		return 1;
	while (j-- > 0 && w->piece[j] == w->piece[i])
		if (isfinite(w->zx[j]) && !w->mpos[j])
			return w->t[i] - w->t[j] > WINDOW_GAP_STEPS * w->dt_med;
	return 0;
}

/* Settling: the first time from which the speed and the turning rate,
 * averaged over centred windows of W (one heading-oscillation period, or
 * more when one period's mean is too noisy for the tolerance, at most
 * SETTLE_MAX_MULT), stay within a tolerance of their steady values for W of
 * windows: the first time after which no window that can be judged is
 * unsteady (off by more than EXCURSION_MAX tolerances, or for a quarter
 * window: a shorter, slight excursion of a window mean is noise), with at
 * least W of judged windows.  Steady values are the means
 * of the windows of the second half of the motion.  Windows across gaps
 * (occlusions, splits) cannot be judged: they neither break a steady
 * stretch nor count toward it, so a gap does not delay the trim.
 * A centred window keeps the detected time unbiased for a smooth approach
 * (an exponential with time constant tau is late by about W^2 / (24 tau)).
 * The turning rate is the heading's when there is one, else the direction
 * of travel's. */
static void settle(const work *w, const wl_clean_params *p, wl_clean_robot *rb, const double *spd,
                   const double *ang, size_t on, size_t end)
{
	size_t run = (size_t)-1, bad = (size_t)-1, npiece = 0;
	double P, W = 0, tolv = 0, tolr = INFINITY, *mv, *mr, *I, sr_med = 0,
	          tmid = 0.5 * (w->t[on] + w->t[end]), steady = 0, tprev = NAN, scat_v = NAN, scat_r = NAN;
	int mult;
	rb->trim_s = w->t[on];
	rb->trim_reason = "not-settled";
	rb->settle_unjudged_s = 0;
	rb->turn_source = ang == w->h ? "heading" : ang ? "direction of travel" : "none";
	rb->period_s = find_period(w, on, end, twmean(w, w->r, on, end));
	P = isfinite(rb->period_s) ? rb->period_s : p->default_window_s;
	for (size_t q = 0; q < w->npieces; q++)
		if (w->pstart[q + 1] - w->pstart[q] > npiece)
			npiece = w->pstart[q + 1] - w->pstart[q];
	mv = malloc((end + 1) * sizeof *mv);
	mr = malloc((end + 1) * sizeof *mr);
	I = malloc((npiece ? npiece : 1) * sizeof *I);
	if (!mv || !mr || !I)
		goto out;
	{
		size_t k = 0;
		for (size_t i = on; i <= end; i++)
			if (isfinite(w->sr[i]))
				mv[k++] = w->sr[i]; /* scratch, before it holds the window means */
		sr_med = ang == w->h && k ? clean_median(mv, k) : 0;
	}
	for (mult = 1; mult <= SETTLE_MAX_MULT; mult++) {
		W = mult * P;
		window_means(w, spd, ang, on, end, W, rb->speed_sigma_mps, sr_med, I, mv, mr);
		/* steady values and the scatter of the window means (1.4826 MAD)
		 * over the second half */
		mean_mad(w, mv, on, end, tmid, &rb->speed_ref_mps, &scat_v);
		if (ang)
			mean_mad(w, mr, on, end, tmid, &rb->yaw_ref_radps, &scat_r);
		if (!isfinite(rb->speed_ref_mps))
			continue;
		tolv = fmax(p->settle_tol * rb->speed_ref_mps, 3 * scat_v);
		if (isfinite(rb->yaw_ref_radps))
			tolr = fmax(fmax(p->settle_tol * fabs(rb->yaw_ref_radps), p->settle_yaw_tol_radps),
			            3 * scat_r);
		if (3 * scat_v <= p->settle_tol * rb->speed_ref_mps)
			break;
	}
	if (mult > SETTLE_MAX_MULT)
		mult = SETTLE_MAX_MULT;
	rb->window_s = W;
	rb->settle_tol_mps = tolv;
	rb->settle_tol_radps = tolr;
	if (!isfinite(rb->speed_ref_mps))
		goto out;
	for (size_t i = on; i <= end; i++) {
		/* the largest deviation, in units of its tolerance */
		double dev;
		int ok, full = isfinite(mv[i]) && (!isfinite(rb->yaw_ref_radps) || isfinite(mr[i]));
		if (!full) {
			/* cannot be judged: the stretch may start here and goes on after
			 * it, but its time does not count as steady; it starts after the
			 * last gap in such a stretch, though (rows before a gap were
			 * never shown steady after the last unsteady window) */
			if (run == (size_t)-1 || (steady == 0 && after_gap(w, i)))
				run = i;
			tprev = NAN;
			continue;
		}
		dev = fmax(fabs(mv[i] - rb->speed_ref_mps) / tolv,
		           isfinite(rb->yaw_ref_radps) ? fabs(mr[i] - rb->yaw_ref_radps) / tolr : 0);
		ok = dev <= 1;
		if (!ok) {
			/* unsteady for a quarter window at least, or far off: the stretch
			 * is broken; a shorter, slight excursion of a window mean is noise */
			if (bad == (size_t)-1)
				bad = i;
			if (w->t[i] - w->t[bad] >= W / 4 || dev > EXCURSION_MAX) {
				run = (size_t)-1;
				steady = 0;
			}
			tprev = NAN;
			continue;
		}
		bad = (size_t)-1;
		if (run == (size_t)-1)
			run = i;
		if (isfinite(tprev))
			steady += w->t[i] - tprev;
		tprev = w->t[i];
		if (steady >= W) {
			rb->trim_s = w->t[run];
			rb->trim_reason = "settled";
			break;
		}
	}
	/* time between the onset and the trim that could not be judged */
	rb->settle_unjudged_s = 0;
	for (size_t j = on + 1; j <= end && w->t[j] <= rb->trim_s; j++)
		if (!isfinite(mv[j]))
			rb->settle_unjudged_s += w->t[j] - w->t[j - 1];
out:
	free(mv);
	free(mr);
	free(I);
}

/* The direction of travel, unwrapped within each piece. */
static void course_angle(const work *w, double *c)
{
	for (size_t q = 0; q < w->npieces; q++) {
		double prev = NAN;
		for (size_t i = w->pstart[q]; i < w->pstart[q + 1]; i++) {
			c[i] = atan2(w->vy[i], w->vx[i]);
			if (isfinite(prev))
				c[i] = prev + wl_wrap_pi(c[i] - prev);
			prev = c[i];
		}
	}
}

void clean_cut_and_segment(work *w, const wl_clean_params *p, wl_clean_robot *rb)
{
	size_t m = w->n ? w->n : 1;
	double *spd = malloc(m * sizeof *spd), *tmp = malloc(m * sizeof *tmp), *ds = malloc(m * sizeof *ds),
	       *thr = malloc(m * sizeof *thr), *ang = NULL;
	double margin = p->wall_margin_m >= 0 ? p->wall_margin_m : 0.5 * p->body_diameter_m;
	size_t on, end, from, seg = 0, k = 0;
	int all_h = 1;
	rb->onset_s = rb->wall_s = rb->period_s = rb->window_s = NAN;
	rb->speed_ref_mps = rb->yaw_ref_radps = rb->wall_dist_m = rb->settle_tol_mps = rb->settle_tol_radps =
	        rb->speed_threshold_mps = rb->speed_sigma_mps = NAN;
	rb->trim_s = w->n ? w->t[0] : NAN;
	rb->trim_reason = "none";
	rb->end_reason = p->n_outline ? "end-of-track" : "no-outline";
	if (!spd || !tmp || !ds || !thr || w->n == 0)
		goto out;
	for (size_t i = 0; i < w->n; i++) {
		spd[i] = hypot(w->vx[i], w->vy[i]);
		if (isfinite(w->sv[i]))
			tmp[k++] = w->sv[i];
	}
	rb->speed_sigma_mps = clean_median(tmp, k);
	displacement_speed(w, p->min_speed_mps, ds, thr);
	k = 0;
	for (size_t i = 0; i < w->n; i++)
		if (isfinite(thr[i]))
			tmp[k++] = thr[i];
	rb->speed_threshold_mps = k ? clean_median(tmp, k) : p->min_speed_mps;
	{
		double span = 0;
		for (size_t q = 0; q < w->npieces; q++)
			span += w->t[w->pstart[q + 1] - 1] - w->t[w->pstart[q]];
		if (span < p->min_segment_s) {
			/* too little to tell moving from still: left out like a short piece */
			rb->trim_reason = rb->end_reason = "too-short";
			for (size_t i = 0; i < w->n; i++) {
				w->cut[i] = WL_CUT_GAP;
				w->seg[i] = -1;
			}
			goto out;
		}
	}
	on = find_onset(w, ds, thr);
	if (on == (size_t)-1) {
		rb->still = 1;
		rb->trim_reason = rb->end_reason = "still";
		for (size_t i = 0; i < w->n; i++) {
			w->cut[i] = WL_CUT_STILL;
			w->seg[i] = -1;
		}
		goto out;
	}
	rb->onset_s = w->t[on];
	if (p->trim == WL_TRIM_FIXED) {
		rb->trim_s = w->t[0] + p->trim_s;
		rb->trim_reason = "fixed";
	}
	/* the wall: from the motion onset (auto) or the trim (fixed, none) */
	end = w->n - 1;
	from = p->trim == WL_TRIM_AUTO ? on : 0;
	if (p->n_outline)
		for (size_t i = from; i < w->n; i++) {
			if (p->trim != WL_TRIM_AUTO && w->t[i] < rb->trim_s)
				continue;
			double d = wl_clean_outline_dist(p, w->x[i], w->y[i]);
			if (d < margin) {
				rb->wall_s = w->t[i];
				rb->wall_dist_m = d;
				rb->end_reason = "wall";
				end = i ? i - 1 : 0;
				break;
			}
		}
	if (p->trim == WL_TRIM_AUTO) {
		for (size_t q = 0; q < w->npieces; q++)
			all_h &= w->phas_h[q];
		if (!all_h && (ang = malloc(m * sizeof *ang)) != NULL)
			course_angle(w, ang);
		settle(w, p, rb, spd, all_h ? w->h : ang, on, end > on ? end : on);
	}
	for (size_t i = 0; i < w->n; i++) {
		w->seg[i] = -1;
		w->cut[i] = w->t[i] < rb->trim_s                              ? WL_CUT_START
		            : (isfinite(rb->wall_s) && w->t[i] >= rb->wall_s) ? WL_CUT_WALL
		                                                              : WL_CUT_NONE;
	}
	for (size_t q = 0; q < w->npieces; q++) {
		size_t a = (size_t)-1, b = 0;
		for (size_t i = w->pstart[q]; i < w->pstart[q + 1]; i++)
			if (w->cut[i] == WL_CUT_NONE) {
				if (a == (size_t)-1)
					a = i;
				b = i;
			}
		if (a == (size_t)-1)
			continue;
		if (w->t[b] - w->t[a] < p->min_segment_s) {
			for (size_t i = a; i <= b; i++)
				w->cut[i] = WL_CUT_GAP;
			continue;
		}
		for (size_t i = a; i <= b; i++)
			w->seg[i] = (int)seg;
		seg++;
	}
out:
	free(spd);
	free(tmp);
	free(ds);
	free(thr);
	free(ang);
}

wl_status clean_list_segments(const work *w, wl_clean_robot *rb, wl_err *err)
{
	int maxseg = -1;
	for (size_t i = 0; i < w->n; i++)
		if (w->seg[i] > maxseg)
			maxseg = w->seg[i];
	rb->nsegments = (size_t)(maxseg + 1);
	if (!rb->nsegments)
		return WL_OK;
	if (!(rb->segments = calloc(rb->nsegments, sizeof *rb->segments)))
		return wl_err_set(err, WL_ENOMEM, "out of memory");
	for (size_t i = 0; i < w->n; i++) {
		wl_clean_segment *s;
		if (w->seg[i] < 0)
			continue;
		s = &rb->segments[w->seg[i]];
		if (s->rows == 0)
			s->t0_s = w->t[i];
		s->t1_s = w->t[i];
		s->rows++;
	}
	return WL_OK;
}
