/*
 * smooth.c: the clean stage's smoothing of one robot's pieces:
 *   noise: measurement noise by a robust rule (MAD of the residual of each
 *          detection from the straight line through its two neighbours),
 *          process noise by maximum likelihood of the Kalman innovations;
 *   RTS:   Rauch-Tung-Striebel over a kinematic model (kin.c), position and
 *          heading as two groups with chi-square gating of detections;
 *   SG:    local Savitzky-Golay fits in t (sg.c) with leave-one-out gating.
 * Both fill the smoothed state of clean_work.h and mark outliers.
 */
#include "clean/clean.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "clean/kin.h"
#include "clean/sg.h"
#include "core/angle.h"

#include "clean/clean_work.h"

#define IX(i, j) ((i)*3 + (j))

/* Chi-square quantiles for 1 and 2 degrees of freedom at probability p. */
static double chi2_q2(double p)
{
	return -2.0 * log(1.0 - p);
}

static double chi2_q1(double p)
{
	double lo = 0, hi = 40;
	for (int i = 0; i < 200; i++) {
		double mid = 0.5 * (lo + hi);
		if (erfc(mid / sqrt(2.0)) > 1.0 - p)
			lo = mid;
		else
			hi = mid;
	}
	return lo * lo;
}

/* -------------------------------------------------------- noise estimates */

/* Robust standard deviation of z: the residual of each measurement from the
 * line through its two neighbouring measurements, divided by its own
 * standard deviation in units of sigma, sqrt(1 + a^2 + b^2) (a, b the
 * interpolation weights, 1/2 each for even steps), then 1.4826 MAD (the
 * consistency factor of the normal distribution).  Angular data use wrapped
 * differences.  Returns NaN when there are fewer than 5 triples. */
double clean_mad_sigma(const work *w, const double *z, int angular)
{
	double *res = malloc((w->n ? w->n : 1) * sizeof *res), s;
	size_t m = 0;
	if (!res)
		return NAN;
	for (size_t q = 0; q < w->npieces; q++) {
		size_t a = (size_t)-1, b = (size_t)-1;
		for (size_t i = w->pstart[q]; i < w->pstart[q + 1]; i++) {
			if (!isfinite(z[i]))
				continue;
			if (a != (size_t)-1 && b != (size_t)-1) {
				double h1 = w->t[b] - w->t[a], h2 = w->t[i] - w->t[b];
				double d1 = z[b] - z[a], d2 = z[i] - z[b], f;
				if (angular) {
					d1 = wl_wrap_pi(d1);
					d2 = wl_wrap_pi(d2);
				}
				f = 1 + (h1 * h1 + h2 * h2) / ((h1 + h2) * (h1 + h2));
				res[m++] = (d1 * h2 - d2 * h1) / (h1 + h2) / sqrt(f);
			}
			a = b;
			b = i;
		}
	}
	if (m < 5) {
		free(res);
		return NAN;
	}
	s = clean_median(res, m);
	for (size_t i = 0; i < m; i++)
		res[i] = fabs(res[i] - s);
	s = 1.4826 * clean_median(res, m);
	free(res);
	return s;
}

/* ------------------------------------------------------------- RTS group */

typedef struct {
	int naxes;
	wl_kin_cfg cfg;
	const double *z[2];
	wl_kin_step *st[2];
} group;

/* Forward filter over all pieces of a group of independent axes that share
 * their gating (x and y; or heading).  mask_in: rejected detections (may be
 * NULL); gate > 0 rejects innovations beyond the chi-square gate and marks
 * them in mask_out (may be NULL).  Returns the log-likelihood, where a
 * rejected detection adds the value at the gate (a capped, robust
 * likelihood, so one wild point cannot drive the noise estimate). */
static double group_forward(const work *w, group *g, const unsigned char *mask_in, double gate,
                            unsigned char *mask_out)
{
	double ll = 0;
	for (size_t q = 0; q < w->npieces; q++) {
		size_t a = w->pstart[q], b = w->pstart[q + 1];
		for (int k = 0; k < g->naxes; k++) {
			double z0 = 0;
			for (size_t i = a; i < b; i++)
				if (isfinite(g->z[k][i]) && !(mask_in && mask_in[i])) {
					z0 = g->z[k][i];
					break;
				}
			wl_kin_start(&g->cfg, z0, &g->st[k][a]);
		}
		for (size_t i = a; i < b; i++) {
			double nu[2], S[2], chi = 0, lls = 0;
			int have = 1;
			for (int k = 0; k < g->naxes; k++) {
				if (i > a)
					wl_kin_predict(&g->cfg, &g->st[k][i - 1], w->t[i] - w->t[i - 1],
					               &g->st[k][i]);
				if (!isfinite(g->z[k][i]))
					have = 0;
			}
			if (mask_out)
				mask_out[i] = 0;
			if (!have || (mask_in && mask_in[i]))
				continue;
			for (int k = 0; k < g->naxes; k++) {
				wl_kin_innov(&g->cfg, &g->st[k][i], g->z[k][i], &nu[k], &S[k]);
				chi += nu[k] * nu[k] / S[k];
				lls += log(2 * WL_PI * S[k]);
			}
			if (gate > 0 && chi > gate) {
				if (mask_out)
					mask_out[i] = 1;
				ll += -0.5 * (lls + gate);
				continue;
			}
			ll += -0.5 * (lls + chi);
			for (int k = 0; k < g->naxes; k++)
				wl_kin_update(&g->cfg, &g->st[k][i], nu[k], S[k]);
		}
	}
	return ll;
}

static int group_backward(const work *w, group *g)
{
	for (size_t q = 0; q < w->npieces; q++) {
		size_t a = w->pstart[q], b = w->pstart[q + 1];
		for (int k = 0; k < g->naxes; k++)
			if (!wl_kin_backward(&g->cfg, b - a, w->t + a, g->st[k] + a))
				return 0;
	}
	return 1;
}

/* Maximum likelihood of log10 q: a grid of whole decades, then golden-section
 * search in the best cell. */
static double ml_q(const work *w, group *g, double gate)
{
	double q0 = g->cfg.r / (w->dt_med * w->dt_med * w->dt_med), lo = log10(q0) - 10, hi = log10(q0) + 2;
	double best = lo, bestll = -INFINITY, a, b, c, d, fc, fd;
	const double gr = 0.6180339887498949;
	for (double e = lo; e <= hi + 1e-9; e += 1.0) {
		double ll;
		g->cfg.q = pow(10, e);
		ll = group_forward(w, g, NULL, gate, NULL);
		if (ll > bestll) {
			bestll = ll;
			best = e;
		}
	}
	a = best - 1.0, b = best + 1.0;
	c = b - gr * (b - a), d = a + gr * (b - a);
	g->cfg.q = pow(10, c);
	fc = group_forward(w, g, NULL, gate, NULL);
	g->cfg.q = pow(10, d);
	fd = group_forward(w, g, NULL, gate, NULL);
	for (int it = 0; it < 24; it++) {
		if (fc > fd) {
			b = d, d = c, fd = fc;
			c = b - gr * (b - a);
			g->cfg.q = pow(10, c);
			fc = group_forward(w, g, NULL, gate, NULL);
		} else {
			a = c, c = d, fc = fd;
			d = a + gr * (b - a);
			g->cfg.q = pow(10, d);
			fd = group_forward(w, g, NULL, gate, NULL);
		}
	}
	return pow(10, 0.5 * (a + b));
}

/* Residual check after smoothing: a detection far from the smoothed track
 * (normalised by the measurement noise) is rejected too.  This catches
 * outliers the forward gate let through, e.g. at a piece's first sample.
 * Returns the number of newly rejected detections. */
static size_t post_check(const work *w, const group *g, unsigned char *mask, double gate)
{
	size_t added = 0;
	for (size_t i = 0; i < w->n; i++) {
		double chi = 0;
		int have = 1;
		if (mask[i])
			continue;
		for (int k = 0; k < g->naxes; k++) {
			double e;
			if (!isfinite(g->z[k][i])) {
				have = 0;
				break;
			}
			e = g->z[k][i] - g->st[k][i].xs[0];
			if (g->cfg.angular)
				e = wl_wrap_pi(e);
			chi += e * e / g->cfg.r;
		}
		if (have && chi > gate) {
			mask[i] = 1;
			added++;
		}
	}
	return added;
}

/* Runs a group to convergence of its outlier mask; fills mask. */
static int group_smooth(const work *w, group *g, double gate, unsigned char *mask)
{
	int ok = 1;
	group_forward(w, g, NULL, gate, mask);
	for (int pass = 0; pass < MAX_OUTLIER_PASSES; pass++) {
		group_forward(w, g, mask, 0, NULL);
		if (!group_backward(w, g)) {
			ok = 0;
			break;
		}
		if (post_check(w, g, mask, gate) == 0)
			break;
	}
	return ok;
}

wl_status clean_smooth_rts(work *w, const wl_clean_params *p, wl_clean_robot *rb, wl_err *err)
{
	size_t n = w->n;
	wl_kin_step *sx = malloc(n * sizeof *sx), *sy = malloc(n * sizeof *sy), *sh = malloc(n * sizeof *sh);
	group gp = {2, {p->model_dim, 0, 0, 0, {1.0, 1.0, 10.0}}, {w->zx, w->zy}, {sx, sy}};
	group gh = {1, {p->model_dim, 0, 0, 1, {WL_PI * WL_PI, 100.0, 1e4}}, {w->zh, NULL}, {sh, NULL}};
	double g2 = chi2_q2(p->gate_prob), g1 = chi2_q1(p->gate_prob);
	wl_status st = WL_OK;
	int any_h = 0;
	if (!sx || !sy || !sh) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory (%zu samples)", n);
		goto out;
	}
	for (size_t q = 0; q < w->npieces; q++)
		any_h |= w->phas_h[q];
	gp.cfg.r = rb->sigma_pos_m * rb->sigma_pos_m;
	gh.cfg.r = rb->sigma_heading_rad * rb->sigma_heading_rad;
	gp.cfg.q = p->q_pos > 0 ? p->q_pos : ml_q(w, &gp, g2);
	gh.cfg.q = p->q_heading > 0 ? p->q_heading : any_h ? ml_q(w, &gh, g1) : 1.0;
	rb->q_pos = gp.cfg.q;
	rb->q_heading = any_h ? gh.cfg.q : NAN;
	rb->q_estimated = !(p->q_pos > 0) || !(p->q_heading > 0);
	if (!group_smooth(w, &gp, g2, w->mpos) || !group_smooth(w, &gh, g1, w->mh)) {
		st = wl_err_set(err, WL_EINVAL,
		                "robot %ld: the smoother became singular: give noise levels "
		                "with --sigma-pos-m and --q-pos",
		                rb->id);
		goto out;
	}
	/* a detection rejected in either group is an outlier as a whole: both
	 * groups are run once more with the union of the masks (this also
	 * applies rejections added by the last residual check) */
	for (size_t i = 0; i < n; i++) {
		w->why[i] = (unsigned char)(w->mpos[i] | w->mh[i] << 1);
		w->mpos[i] = w->mh[i] = w->why[i] != 0;
	}
	group_forward(w, &gp, w->mpos, 0, NULL);
	group_forward(w, &gh, w->mh, 0, NULL);
	if (!group_backward(w, &gp) || !group_backward(w, &gh)) {
		st = wl_err_set(err, WL_EINVAL, "robot %ld: the smoother became singular", rb->id);
		goto out;
	}
	for (size_t i = 0; i < n; i++) {
		w->x[i] = sx[i].xs[0];
		w->vx[i] = sx[i].xs[1];
		w->y[i] = sy[i].xs[0];
		w->vy[i] = sy[i].xs[1];
		w->sv[i] = sqrt(0.5 * (sx[i].Ps[IX(1, 1)] + sy[i].Ps[IX(1, 1)]));
		if (w->phas_h[w->piece[i]]) {
			w->h[i] = sh[i].xs[0];
			w->r[i] = sh[i].xs[1];
			w->sr[i] = sqrt(sh[i].Ps[IX(1, 1)]);
		} else {
			w->h[i] = w->r[i] = w->sr[i] = NAN;
		}
	}
out:
	free(sx);
	free(sy);
	free(sh);
	return st;
}

/* ----------------------------------------------------------- SG smoother */

/* Picks up to `want` valid samples nearest in time to sample i within its
 * piece (i itself excluded when `loo`).  Returns the count. */
static int sg_window(const work *w, const double *z, const unsigned char *mask, size_t i, int want, int loo,
                     size_t *idx)
{
	size_t a = w->pstart[w->piece[i]], b = w->pstart[w->piece[i] + 1];
	long L = (long)i - 1, R = (long)i + 1;
	int k = 0;
	if (!loo && isfinite(z[i]) && !mask[i])
		idx[k++] = i;
	while (k < want) {
		while (L >= (long)a && (!isfinite(z[L]) || mask[L]))
			L--;
		while (R < (long)b && (!isfinite(z[R]) || mask[R]))
			R++;
		if (L < (long)a && R >= (long)b)
			break;
		if (R >= (long)b || (L >= (long)a && w->t[i] - w->t[L] <= w->t[R] - w->t[i]))
			idx[k++] = (size_t)L--;
		else
			idx[k++] = (size_t)R++;
	}
	return k;
}

/* Value (deriv 0) or derivative at t[i] of the local fit; var gets the sum
 * of squared weights (the variance in units of sigma^2). */
static double sg_eval(const work *w, const double *z, const unsigned char *mask, size_t i, int win, int order,
                      int deriv, int loo, double *var)
{
	size_t idx[WL_SG_MAX_WINDOW];
	double tt[WL_SG_MAX_WINDOW], wt[WL_SG_MAX_WINDOW], s = 0, v = 0;
	int k = sg_window(w, z, mask, i, win, loo, idx), o = order;
	for (int j = 0; j < k; j++)
		tt[j] = w->t[idx[j]];
	while (o >= deriv && !wl_sg_weights(tt, k, w->t[i], o, deriv, wt))
		o--;
	if (o < deriv) {
		if (var)
			*var = NAN;
		return deriv ? 0 : NAN;
	}
	for (int j = 0; j < k; j++) {
		s += wt[j] * z[idx[j]];
		v += wt[j] * wt[j];
	}
	if (var)
		*var = v;
	return s;
}

/* Unwraps headings within each piece against the last plausible value, so
 * that a single frame flipped by ~180 degrees does not shift the rest. */
static void unwrap_robust(const work *w, double *u)
{
	for (size_t q = 0; q < w->npieces; q++) {
		double ref = NAN;
		for (size_t i = w->pstart[q]; i < w->pstart[q + 1]; i++) {
			double d;
			u[i] = w->zh[i];
			if (!isfinite(u[i]))
				continue;
			if (!isfinite(ref)) {
				ref = u[i];
				continue;
			}
			d = wl_wrap_pi(w->zh[i] - ref);
			u[i] = ref + d;
			if (fabs(d) < WL_PI / 2)
				ref = u[i];
		}
	}
}

wl_status clean_smooth_sg(work *w, const wl_clean_params *p, wl_clean_robot *rb, wl_err *err)
{
	size_t n = w->n;
	double *uh = malloc((n ? n : 1) * sizeof *uh);
	double g2 = chi2_q2(p->gate_prob), g1 = chi2_q1(p->gate_prob);
	double rp = rb->sigma_pos_m * rb->sigma_pos_m, rh = rb->sigma_heading_rad * rb->sigma_heading_rad;
	int win = p->sg_window, ord = p->sg_order;
	if (!uh)
		return wl_err_set(err, WL_ENOMEM, "out of memory");
	unwrap_robust(w, uh);
	/* leave-one-out prediction of each detection, iterated so that a point
	 * wrongly rejected next to a real outlier is taken back */
	for (int pass = 0; pass < MAX_OUTLIER_PASSES; pass++) {
		int changed = 0;
		for (size_t i = 0; i < n; i++) {
			double vx, vy, vh, ex, ey, eh;
			unsigned char op = 0, oh = 0;
			if (!isfinite(w->zx[i]))
				continue;
			ex = w->zx[i] - sg_eval(w, w->zx, w->mpos, i, win, ord, 0, 1, &vx);
			ey = w->zy[i] - sg_eval(w, w->zy, w->mpos, i, win, ord, 0, 1, &vy);
			if (isfinite(ex) && isfinite(ey))
				op = (ex * ex + ey * ey) / (rp * (1 + vx)) > g2;
			if (isfinite(uh[i])) {
				eh = wl_wrap_pi(uh[i] - sg_eval(w, uh, w->mh, i, win, ord, 0, 1, &vh));
				if (isfinite(eh))
					oh = eh * eh / (rh * (1 + vh)) > g1;
			}
			changed |= op != w->mpos[i] || oh != w->mh[i];
			w->mpos[i] = op;
			w->mh[i] = oh;
		}
		if (!changed)
			break;
	}
	for (size_t i = 0; i < n; i++) {
		w->why[i] = (unsigned char)(w->mpos[i] | w->mh[i] << 1);
		w->mpos[i] = w->mh[i] = w->why[i] != 0;
	}
	for (size_t i = 0; i < n; i++) {
		double var;
		w->x[i] = sg_eval(w, w->zx, w->mpos, i, win, ord, 0, 0, NULL);
		w->y[i] = sg_eval(w, w->zy, w->mpos, i, win, ord, 0, 0, NULL);
		w->vx[i] = sg_eval(w, w->zx, w->mpos, i, win, ord, 1, 0, &var);
		w->vy[i] = sg_eval(w, w->zy, w->mpos, i, win, ord, 1, 0, NULL);
		w->sv[i] = rb->sigma_pos_m * sqrt(var);
		if (w->phas_h[w->piece[i]]) {
			w->h[i] = sg_eval(w, uh, w->mh, i, win, ord, 0, 0, NULL);
			w->r[i] = sg_eval(w, uh, w->mh, i, win, ord, 1, 0, &var);
			w->sr[i] = rb->sigma_heading_rad * sqrt(var);
		} else {
			w->h[i] = w->r[i] = w->sr[i] = NAN;
		}
	}
	rb->q_pos = rb->q_heading = NAN;
	free(uh);
	return WL_OK;
}
