/*
 * segment.c: the clean stage's cuts over one robot's smoothed track: the
 * motion onset, settling (the start trimmed to steady motion, a window of
 * one heading-oscillation period), the cut at the tank wall, and the
 * segments that are left (see docs/clean.md, "Trimming").
 */
#include "clean/clean.h"

#include <math.h>
#include <stdlib.h>

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

/* First sample from which the robot moves: speed above thr for at least
 * 0.25 s (common practice: a short hold rejects single noisy frames). */
static size_t find_onset(const work *w, const double *spd, double thr)
{
	size_t run = (size_t)-1;
	for (size_t i = 0; i < w->n; i++) {
		if (spd[i] > thr) {
			if (run == (size_t)-1 || w->piece[i] != w->piece[run])
				run = i;
			if (w->t[i] - w->t[run] >= 0.25)
				return run;
		} else {
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

/* 1.4826 MAD of v[a..b] about ref (the normal consistency factor). */
static double mad_of(const double *v, size_t a, size_t b, double ref)
{
	double *d, s;
	size_t m = 0;
	if (b < a)
		return 0;
	if (!(d = malloc((b - a + 1) * sizeof *d)))
		return 0;
	for (size_t i = a; i <= b; i++)
		if (isfinite(v[i]))
			d[m++] = fabs(v[i] - ref);
	s = m ? 1.4826 * clean_median(d, m) : 0;
	free(d);
	return s;
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

/* Centred window means of v over [t - W/2, t + W/2] for samples a..b whose
 * window lies inside [t[a], t[b]]; others get NaN. */
static void window_means(const work *w, const double *v, size_t a, size_t b, double W, double *I, double *m)
{
	size_t k0 = 0, k1 = 0, n = b - a + 1;
	I[0] = 0;
	for (size_t i = 1; i < n; i++)
		I[i] = I[i - 1] + 0.5 * (v[a + i] + v[a + i - 1]) * (w->t[a + i] - w->t[a + i - 1]);
	for (size_t i = 0; i < n; i++) {
		double t = w->t[a + i];
		m[a + i] = NAN;
		if (t - W / 2 < w->t[a] || t + W / 2 > w->t[b])
			continue;
		m[a + i] = (integ_at(w->t + a, v + a, I, n, t + W / 2, &k1) -
		            integ_at(w->t + a, v + a, I, n, t - W / 2, &k0)) /
		           W;
	}
}

/* Settling: the first time from which the speed and the yaw rate, averaged
 * over centred windows of W (one heading-oscillation period, or more when one
 * period's mean is too noisy for the tolerance, at most SETTLE_MAX_MULT), stay within a tolerance of
 * their steady values for W.  Steady values are means over the second half
 * of the motion.  A centred window keeps the detected time unbiased for a
 * smooth approach (an exponential with time constant tau is late by about
 * W^2 / (24 tau)). */
static void settle(const work *w, const wl_clean_params *p, wl_clean_robot *rb, const double *spd, size_t on,
                   size_t end)
{
	size_t mid = on + (end - on) / 2, run = (size_t)-1, n = end - on + 1;
	double P, W = 0, tolv = 0, tolr = INFINITY, *mv, *mr, *I;
	int mult;
	rb->trim_s = w->t[on];
	rb->trim_reason = "not-settled";
	rb->speed_ref_mps = twmean(w, spd, mid, end);
	rb->yaw_ref_radps = isfinite(w->r[mid]) ? twmean(w, w->r, mid, end) : NAN;
	rb->period_s = find_period(w, on, end, twmean(w, w->r, on, end));
	P = isfinite(rb->period_s) ? rb->period_s : p->default_window_s;
	mv = malloc((end + 1) * sizeof *mv);
	mr = malloc((end + 1) * sizeof *mr);
	I = malloc(n * sizeof *I);
	if (!mv || !mr || !I)
		goto out;
	for (mult = 1; mult <= SETTLE_MAX_MULT; mult++) {
		double scat_v, scat_r;
		W = mult * P;
		window_means(w, spd, on, end, W, I, mv);
		if (isfinite(rb->yaw_ref_radps))
			window_means(w, w->r, on, end, W, I, mr);
		/* scatter of the window means over the second half (1.4826 MAD) */
		scat_v = mad_of(mv, mid, end, rb->speed_ref_mps);
		scat_r = isfinite(rb->yaw_ref_radps) ? mad_of(mr, mid, end, rb->yaw_ref_radps) : 0;
		tolv = fmax(p->settle_tol * rb->speed_ref_mps, 3 * scat_v);
		if (isfinite(rb->yaw_ref_radps))
			tolr = fmax(fmax(p->settle_tol * fabs(rb->yaw_ref_radps), p->settle_yaw_tol_radps),
			            3 * scat_r);
		if (3 * scat_v <= p->settle_tol * rb->speed_ref_mps)
			break;
	}
	rb->window_s = W;
	rb->settle_tol_mps = tolv;
	rb->settle_tol_radps = tolr;
	for (size_t i = on; i <= end; i++) {
		int ok = isfinite(mv[i]) && fabs(mv[i] - rb->speed_ref_mps) <= tolv &&
		         (!isfinite(rb->yaw_ref_radps) ||
		          (isfinite(mr[i]) && fabs(mr[i] - rb->yaw_ref_radps) <= tolr));
		if (!ok) {
			run = (size_t)-1;
			continue;
		}
		if (run == (size_t)-1)
			run = i;
		if (w->t[i] - w->t[run] >= W) {
			rb->trim_s = w->t[run];
			rb->trim_reason = "settled";
			break;
		}
	}
out:
	free(mv);
	free(mr);
	free(I);
}

/* Every sample left out with the same cut. */
static void cut_all(work *w, wl_clean_cut cut)
{
	for (size_t i = 0; i < w->n; i++) {
		w->cut[i] = cut;
		w->seg[i] = -1;
	}
}

/* Total time covered by the pieces. */
static double pieces_span(const work *w)
{
	double span = 0;
	for (size_t q = 0; q < w->npieces; q++)
		span += w->t[w->pstart[q + 1] - 1] - w->t[w->pstart[q]];
	return span;
}

/* The first sample closer to the tank wall than the margin, from `from` on
 * (and not before the trim unless trimming is automatic); sets wall_s and
 * returns the last sample before it, else the last sample. */
static size_t find_wall(const work *w, const wl_clean_params *p, wl_clean_robot *rb, size_t from)
{
	double margin = p->wall_margin_m >= 0 ? p->wall_margin_m : 0.5 * p->body_diameter_m;
	for (size_t i = from; p->n_outline && i < w->n; i++) {
		double d;
		if (p->trim != WL_TRIM_AUTO && w->t[i] < rb->trim_s)
			continue;
		d = wl_clean_outline_dist(p, w->x[i], w->y[i]);
		if (d < margin) {
			rb->wall_s = w->t[i];
			rb->wall_dist_m = d;
			rb->end_reason = "wall";
			return i ? i - 1 : 0;
		}
	}
	return w->n - 1;
}

/* Cuts by time (start, wall), then numbers the pieces that are left and
 * long enough; shorter ones are cut 'gap'. */
static void assign_segments(work *w, const wl_clean_params *p, const wl_clean_robot *rb)
{
	int seg = 0;
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
			w->seg[i] = seg;
		seg++;
	}
}

void clean_cut_and_segment(work *w, const wl_clean_params *p, wl_clean_robot *rb)
{
	double *spd = malloc((w->n ? w->n : 1) * sizeof *spd), *tmp = malloc((w->n ? w->n : 1) * sizeof *tmp);
	size_t on, end, m = 0;
	rb->onset_s = rb->wall_s = rb->period_s = rb->window_s = NAN;
	rb->speed_ref_mps = rb->yaw_ref_radps = rb->wall_dist_m = rb->settle_tol_mps = rb->settle_tol_radps =
	        NAN;
	rb->trim_s = w->n ? w->t[0] : NAN;
	rb->trim_reason = "none";
	rb->end_reason = p->n_outline ? "end-of-track" : "no-outline";
	if (!spd || !tmp || w->n == 0)
		goto out;
	for (size_t i = 0; i < w->n; i++) {
		spd[i] = hypot(w->vx[i], w->vy[i]);
		if (isfinite(w->sv[i]))
			tmp[m++] = w->sv[i];
	}
	rb->speed_sigma_mps = clean_median(tmp, m);
	/* 5 sigma of one velocity component: a still robot's speed (Rayleigh)
	 * exceeds it with probability exp(-12.5) */
	rb->speed_threshold_mps = fmax(p->min_speed_mps, 5 * rb->speed_sigma_mps);
	if (pieces_span(w) < p->min_segment_s) {
		/* too little to tell moving from still: left out like a short piece */
		rb->trim_reason = rb->end_reason = "too-short";
		cut_all(w, WL_CUT_GAP);
		goto out;
	}
	on = find_onset(w, spd, rb->speed_threshold_mps);
	if (on == (size_t)-1) {
		rb->still = 1;
		rb->trim_reason = rb->end_reason = "still";
		cut_all(w, WL_CUT_STILL);
		goto out;
	}
	rb->onset_s = w->t[on];
	if (p->trim == WL_TRIM_FIXED) {
		rb->trim_s = w->t[0] + p->trim_s;
		rb->trim_reason = "fixed";
	}
	/* the wall: from the motion onset (auto) or the trim (fixed, none) */
	end = find_wall(w, p, rb, p->trim == WL_TRIM_AUTO ? on : 0);
	if (p->trim == WL_TRIM_AUTO)
		settle(w, p, rb, spd, on, end > on ? end : on);
	assign_segments(w, p, rb);
out:
	free(spd);
	free(tmp);
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
