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
			if (!isfinite(z[i]) || w->rs[i] != 1.0) /* detections only: held poses are noisier */
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

/* Consecutive far detections that make the filter restart: three in a row
 * beyond the 95% point of their deletion distance happen with probability
 * 1.25e-4 for a model that fits (about once in 8000 frames), so such a run
 * is a change the model did not follow (a sudden manoeuvre, or the tracker
 * followed something else), not noise. */
#define RESTART_RUN 3
#define RESTART_PROB 0.95
/* Samples on either side of a run in the local fits that place a restart. */
#define RESTART_MARGIN 15
/* Restart rounds: each may add restarts where runs remain. */
#define MAX_RESTART_ROUNDS 8
/* Iterations of the reweighted (Huber) smoother. */
#define IRLS_PASSES 4
/* Widening steps when too many detections would be rejected. */
#define MAX_WIDEN 3

typedef struct {
	int naxes;
	wl_kin_cfg cfg;
	const double *z[2];
	wl_kin_step *st[2];
	double *wt;             /* measurement weights (variance r / wt); NULL: all 1 */
	unsigned char *restart; /* 1: the filter restarts at this detection; NULL: none */
	double huber_k;         /* Huber's constant on the Mahalanobis distance */
	double log_out;         /* log density of an outlier (see group_forward) */
	double *chi_loc;        /* scratch of the local fits (best_restart) */
} group;

/* Huber's weight for a Mahalanobis distance d (P. J. Huber, Ann. Math.
 * Statist. 35:73-101, 1964): 1 within k, k / d beyond (bounded influence). */
static double huber_weight(double d, double k)
{
	return d <= k ? 1.0 : k / d;
}

/* The filter restarts at detection i: the prediction is replaced by the
 * measurement with the prior's wide variances (an angular axis keeps its
 * unwrapped turn count), so nothing before i constrains the state after it
 * and the backward pass hardly links the two sides. */
static void restart_at(group *g, size_t i)
{
	for (int k = 0; k < g->naxes; k++) {
		wl_kin_step *s = &g->st[k][i];
		double z = g->z[k][i];
		s->xp[0] = g->cfg.angular ? s->xp[0] + wl_wrap_pi(z - s->xp[0]) : z;
		memset(s->Pp, 0, sizeof s->Pp);
		for (int d = 0; d < g->cfg.dim; d++)
			s->Pp[IX(d, d)] = g->cfg.P0[d];
		memcpy(s->xs, s->xp, sizeof s->xs);
		memcpy(s->Ps, s->Pp, sizeof s->Ps);
	}
}

/* Share of outliers in the contaminated-normal likelihood of robust passes. */
#define OUTLIER_PRIOR 0.05

/* Forward filter over all pieces of a group of independent axes that share
 * their rejection (x and y; or heading).  mask: detections left out (may be
 * NULL).  robust: each update is weighted by Huber's rule on the
 * innovation's Mahalanobis distance (the measurement variance divided by
 * the weight; the weights are stored in g->wt when it is not NULL), and the
 * returned log-likelihood is that of a contaminated normal: each innovation
 * is normal with probability 1 - OUTLIER_PRIOR and otherwise drawn from a
 * broad density that does not depend on the model (Tukey's contaminated
 * normal; log density g->log_out).  A process noise so small that many
 * detections fall far from the prediction then pays for each of them,
 * instead of being rewarded through the smaller innovation variance as a
 * likelihood capped at the gate would reward it.  Otherwise the updates use
 * the weights in g->wt (NULL: 1) and the Gaussian log-likelihood is
 * returned. */
static double forward_range(const work *w, group *g, size_t lo, size_t hi, const unsigned char *mask,
                            int robust)
{
	double ll = 0;
	for (size_t q = 0; q < w->npieces; q++) {
		size_t a = w->pstart[q] > lo ? w->pstart[q] : lo,
		       b = w->pstart[q + 1] < hi ? w->pstart[q + 1] : hi;
		if (a >= b)
			continue;
		for (int k = 0; k < g->naxes; k++) {
			double z0 = 0;
			for (size_t i = a; i < b; i++)
				if (isfinite(g->z[k][i]) && !(mask && mask[i])) {
					z0 = g->z[k][i];
					break;
				}
			wl_kin_start(&g->cfg, z0, &g->st[k][a]);
		}
		int pending = 0; /* a restart on a left-out detection moves to the next one */
		for (size_t i = a; i < b; i++) {
			double nu[2], S[2], chi = 0, lls = 0, wt;
			int have = 1;
			wl_kin_cfg c = g->cfg; /* a held pose's variance is inflated */
			c.r *= w->rs[i];
			/* the axes of a group share their covariances: the second
			 * takes them from the first (wl_kin_predict_shared) */
			for (int k = 0; k < g->naxes; k++) {
				if (i > a && k == 0)
					wl_kin_predict(&g->cfg, &g->st[0][i - 1], w->t[i] - w->t[i - 1],
					               &g->st[0][i]);
				else if (i > a)
					wl_kin_predict_shared(&g->cfg, &g->st[k][i - 1],
					                      w->t[i] - w->t[i - 1], &g->st[0][i],
					                      &g->st[k][i]);
				if (!isfinite(g->z[k][i]))
					have = 0;
			}
			if (have && g->restart && g->restart[i] && i > a)
				pending = 1;
			if (!have || (mask && mask[i]))
				continue;
			if (pending)
				restart_at(g, i);
			pending = 0;
			for (int k = 0; k < g->naxes; k++) {
				wl_kin_innov(&c, &g->st[k][i], g->z[k][i], &nu[k], &S[k]);
				chi += nu[k] * nu[k] / S[k];
				lls += log(2 * WL_PI * S[k]);
			}
			if (robust) {
				double d = sqrt(chi), a1 = log(1 - OUTLIER_PRIOR) - 0.5 * (lls + chi),
				       a2 = log(OUTLIER_PRIOR) + g->log_out;
				wt = huber_weight(d, g->huber_k);
				ll += fmax(a1, a2) + log1p(exp(-fabs(a1 - a2)));
				if (g->wt)
					g->wt[i] = wt;
			} else {
				wt = g->wt ? g->wt[i] : 1.0;
				ll += -0.5 * (lls + chi);
			}
			c.r = g->cfg.r * w->rs[i] / wt;
			for (int k = 0; k < g->naxes; k++) {
				double nk, Sk;
				wl_kin_innov(&c, &g->st[k][i], g->z[k][i], &nk, &Sk);
				if (k == 0)
					wl_kin_update(&c, &g->st[0][i], nk, Sk);
				else
					wl_kin_update_shared(&c, &g->st[k][i], nk, Sk, &g->st[0][i]);
			}
		}
	}
	return ll;
}

static double group_forward(const work *w, group *g, const unsigned char *mask, int robust)
{
	return forward_range(w, g, 0, w->n, mask, robust);
}

static int backward_range(const work *w, group *g, size_t lo, size_t hi)
{
	for (size_t q = 0; q < w->npieces; q++) {
		size_t a = w->pstart[q] > lo ? w->pstart[q] : lo,
		       b = w->pstart[q + 1] < hi ? w->pstart[q + 1] : hi;
		if (a >= b)
			continue;
		if (!wl_kin_backward2(&g->cfg, b - a, w->t + a, g->st[0] + a,
		                      g->naxes > 1 ? g->st[1] + a : NULL))
			return 0;
	}
	return 1;
}

static int group_backward(const work *w, group *g)
{
	return backward_range(w, g, 0, w->n);
}

/* Maximum likelihood of log10 q under the robust (Huber) likelihood: a grid
 * of whole decades, then golden-section search in the best cell. */
static double ml_q(const work *w, group *g)
{
	double q0 = g->cfg.r / (w->dt_med * w->dt_med * w->dt_med), lo = log10(q0) - 10, hi = log10(q0) + 2;
	double best = lo, bestll = -INFINITY, a, b, c, d, fc, fd;
	const double gr = 0.6180339887498949;
	double *keep = g->wt;
	g->wt = NULL;
	for (double e = lo; e <= hi + 1e-9; e += 1.0) {
		double ll;
		g->cfg.q = pow(10, e);
		ll = group_forward(w, g, NULL, 1);
		if (ll > bestll) {
			bestll = ll;
			best = e;
		}
	}
	a = best - 1.0, b = best + 1.0;
	c = b - gr * (b - a), d = a + gr * (b - a);
	g->cfg.q = pow(10, c);
	fc = group_forward(w, g, NULL, 1);
	g->cfg.q = pow(10, d);
	fd = group_forward(w, g, NULL, 1);
	for (int it = 0; it < 24; it++) {
		if (fc > fd) {
			b = d, d = c, fd = fc;
			c = b - gr * (b - a);
			g->cfg.q = pow(10, c);
			fc = group_forward(w, g, NULL, 1);
		} else {
			a = c, c = d, fc = fd;
			d = a + gr * (b - a);
			g->cfg.q = pow(10, d);
			fd = group_forward(w, g, NULL, 1);
		}
	}
	g->wt = keep;
	return pow(10, 0.5 * (a + b));
}

/* Deletion (leave-one-out) chi-square of every detection against the
 * smoothed track: for a detection used with variance r / wt the smoothed
 * residual e and variance Ps give the residual from the smoother without
 * it, e / (1 - h), of variance r + Ps / (1 - h), h = Ps wt / r (the
 * leverage; exact for the linear Gaussian smoother).  A left-out detection
 * (mask) is compared with r + Ps directly.  NaN where there is no
 * detection. */
static void deletion_chi(const work *w, const group *g, size_t lo, size_t hi, const unsigned char *mask,
                         double *chi)
{
	for (size_t i = lo; i < hi; i++) {
		double c = 0, wt = mask && mask[i] ? 0.0 : g->wt ? g->wt[i] : 1.0, r = g->cfg.r * w->rs[i];
		int have = 1;
		for (int k = 0; k < g->naxes; k++) {
			const wl_kin_step *s = &g->st[k][i];
			double e, h;
			if (!isfinite(g->z[k][i])) {
				have = 0;
				break;
			}
			e = g->z[k][i] - s->xs[0];
			if (g->cfg.angular)
				e = wl_wrap_pi(e);
			h = fmin(s->Ps[0] * wt / r, 0.999);
			c += e * e / ((1 - h) * (1 - h)) / (r + s->Ps[0] / (1 - h));
		}
		chi[i] = have ? c : NAN;
	}
}

/* The robust first pass: the smoother reweighted by Huber's rule on each
 * detection's deletion distance until the weights settle (iteratively
 * reweighted least squares, started from the robust forward filter's
 * weights).  It follows the bulk of the detections and sets what "far"
 * means; chi receives the deletion chi-square of each detection.  Returns 0
 * when a covariance became singular. */
static int robust_pass(const work *w, group *g, size_t lo, size_t hi, double *chi)
{
	forward_range(w, g, lo, hi, NULL, 1);
	for (int it = 0; it < IRLS_PASSES; it++) {
		if (!backward_range(w, g, lo, hi))
			return 0;
		deletion_chi(w, g, lo, hi, NULL, chi);
		for (size_t i = lo; i < hi; i++)
			g->wt[i] = isfinite(chi[i]) ? huber_weight(sqrt(chi[i]), g->huber_k) : 1.0;
		forward_range(w, g, lo, hi, NULL, 0);
	}
	if (!backward_range(w, g, lo, hi))
		return 0;
	deletion_chi(w, g, lo, hi, NULL, chi);
	return 1;
}

/* Where to restart the filter for a run of far detections r0..r1 (sample
 * indices): each detection of the run, and the next one, is tried as the
 * restart of a local robust pass over the run and RESTART_MARGIN samples on
 * either side; the one that leaves the smallest sum of deletion chi-squares
 * (each capped at the gate, so that a wild detection counts no more than
 * any rejected one) wins.  A change in velocity (a sudden start or turn)
 * is best split where it happens, a jump in position or heading between
 * its two sides; a single wild detection inside the run does not draw the
 * restart to itself.  Returns the sample index, or (size_t)-1. */
static size_t best_restart(const work *w, group *g, size_t q, size_t r0, size_t r1, double gate)
{
	size_t lo = r0 > w->pstart[q] + RESTART_MARGIN ? r0 - RESTART_MARGIN : w->pstart[q];
	size_t hi = r1 + 1 + RESTART_MARGIN < w->pstart[q + 1] ? r1 + 1 + RESTART_MARGIN : w->pstart[q + 1];
	size_t best = (size_t)-1;
	double best_score = INFINITY;
	for (size_t j = r0; j <= r1 + 1 && j < hi; j++) {
		double score = 0;
		unsigned char keep;
		if (j == w->pstart[q] || !isfinite(g->z[0][j]))
			continue;
		keep = g->restart[j];
		g->restart[j] = 1;
		if (!robust_pass(w, g, lo, hi, g->chi_loc)) {
			g->restart[j] = keep;
			continue;
		}
		g->restart[j] = keep;
		for (size_t i = lo; i < hi; i++)
			if (isfinite(g->chi_loc[i]))
				score += fmin(g->chi_loc[i], gate);
		if (score < best_score) {
			best_score = score;
			best = j;
		}
	}
	return best;
}

/* Marks a restart in every run of RESTART_RUN or more consecutive detections
 * of a piece whose deletion chi-square exceeds far (lost frames between them
 * do not break a run), where best_restart puts it.  Returns the number of
 * new restarts. */
static size_t mark_restarts(const work *w, group *g, double far, double gate, const double *chi)
{
	size_t added = 0;
	for (size_t q = 0; q < w->npieces; q++) {
		size_t r0 = 0, r1 = 0, len = 0;
		for (size_t i = w->pstart[q]; i <= w->pstart[q + 1]; i++) {
			int end = i == w->pstart[q + 1], det = !end && isfinite(chi[i]);
			size_t j;
			if (!end && !det)
				continue;
			if (!end && chi[i] > far) {
				if (len++ == 0)
					r0 = i;
				r1 = i;
				continue;
			}
			if (len >= RESTART_RUN && (j = best_restart(w, g, q, r0, r1, gate)) != (size_t)-1 &&
			    !g->restart[j]) {
				g->restart[j] = 1;
				added++;
			}
			len = 0;
		}
	}
	return added;
}

/* What one rejection leaves: detections, rejected ones, and far ones (beyond
 * the 95% point of their deletion distance but within the gate). */
typedef struct {
	size_t ndet, nrej, nfar, nrestart;
} reject_count;

/* Rejection of one group: the robust pass, then gating of each detection's
 * deletion distance; runs of far detections restart the filter and the pass
 * is repeated.  Fills mask and *rc; returns 0 when singular. */
static int group_reject(const work *w, group *g, double gate, unsigned char *mask, double *chi,
                        reject_count *rc)
{
	double far = g->naxes == 2 ? chi2_q2(RESTART_PROB) : chi2_q1(RESTART_PROB);
	memset(g->restart, 0, w->n);
	for (int round = 0; round <= MAX_RESTART_ROUNDS; round++) {
		if (!robust_pass(w, g, 0, w->n, chi))
			return 0;
		memset(rc, 0, sizeof *rc);
		for (size_t i = 0; i < w->n; i++) {
			mask[i] = isfinite(chi[i]) && chi[i] > gate;
			rc->nrej += mask[i];
			rc->nfar += isfinite(chi[i]) && chi[i] > far && !mask[i];
			rc->ndet += isfinite(chi[i]) != 0;
		}
		if (round == MAX_RESTART_ROUNDS || mark_restarts(w, g, far, gate, chi) == 0)
			break;
	}
	for (size_t i = 0; i < w->n; i++)
		rc->nrestart += g->restart[i];
	return 1;
}

/* How far a rejection is from what a fitting model gives: the rejected
 * detections beyond max_frac of them, plus the far ones beyond what a fitting
 * model exceeds with probability 0.001 (5% of the detections plus 3.1
 * binomial standard deviations); 0 when the model fits.  Each restart
 * counts as the RESTART_RUN far detections that caused it: restarts follow
 * manoeuvres, but a model with too little noise restarts all the time. */
static double misfit(const reject_count *rc, double max_frac)
{
	double n = (double)rc->ndet, p = 1 - RESTART_PROB;
	double over_rej = (double)rc->nrej - max_frac * n,
	       over_far = (double)(rc->nfar + RESTART_RUN * rc->nrestart) -
	                  (p * n + 3.1 * sqrt(p * (1 - p) * n));
	if (over_rej <= 0 && over_far <= 0)
		return 0;
	return (double)rc->nrej + fmax(over_far, 0);
}

/* Rejection with the model's own check.  When more than max_frac of the
 * detections would be rejected, or far more than 5% of them are far (after
 * the restarts, which follow manoeuvres), either the model is wrong (noise
 * levels too small for this track) or the data hold that many gross
 * outliers.  The model is widened (measurement variance x4, process noise
 * x10) and the rejection repeated: if that at least halves the misfit
 * (rejected plus excess far detections), the model was wrong, and widening
 * goes on while it does not fit (at most MAX_WIDEN steps); otherwise the
 * rejected detections are far from any reasonable track and the unwidened
 * model's rejections stand.  Returns the number of widening steps kept, -1
 * when singular. */
static int group_reject_widen(const work *w, group *g, double gate, double max_frac, unsigned char *mask,
                              double *chi, size_t *nrej_out)
{
	reject_count rc;
	double prev;
	int widen = 0;
	if (!group_reject(w, g, gate, mask, chi, &rc))
		return -1;
	*nrej_out = rc.nrej;
	prev = misfit(&rc, max_frac);
	while (rc.ndet > 0 && prev > 0 && widen < MAX_WIDEN) {
		double m;
		g->cfg.r *= 4;
		g->cfg.q *= 10;
		if (!group_reject(w, g, gate, mask, chi, &rc))
			return -1;
		m = misfit(&rc, max_frac);
		if (2 * m > prev) {
			/* no gain: the previous model's rejections stand */
			g->cfg.r /= 4;
			g->cfg.q /= 10;
			if (!group_reject(w, g, gate, mask, chi, &rc))
				return -1;
			*nrej_out = rc.nrej;
			return widen;
		}
		widen++;
		prev = m;
		*nrej_out = rc.nrej;
	}
	return widen;
}

static size_t count_restarts(const work *w, const group *g)
{
	size_t n = 0;
	for (size_t i = 0; i < w->n; i++)
		n += g->restart[i];
	return n;
}

wl_status clean_smooth_rts(work *w, const wl_clean_params *p, wl_clean_robot *rb, wl_err *err)
{
	size_t n = w->n, m = n ? n : 1, nrej_p = 0, nrej_h = 0;
	wl_kin_step *sx = malloc(m * sizeof *sx), *sy = malloc(m * sizeof *sy), *sh = malloc(m * sizeof *sh);
	double *wp = malloc(m * sizeof *wp), *wh = malloc(m * sizeof *wh), *chi = malloc(m * sizeof *chi);
	double *chl = malloc(m * sizeof *chl);
	unsigned char *rp = calloc(m, 1), *rh = calloc(m, 1);
	group gp = {2,   {p->model_dim, 0, 0, 0, {1.0, 1.0, 10.0}}, {w->zx, w->zy}, {sx, sy}, wp, rp, 0, 0,
	            NULL};
	group gh = {1,
	            {p->model_dim, 0, 0, 1, {WL_PI * WL_PI, 100.0, 1e4}},
	            {w->zh, NULL},
	            {sh, NULL},
	            wh,
	            rh,
	            0,
	            0,
	            NULL};
	double g2 = chi2_q2(p->gate_prob), g1 = chi2_q1(p->gate_prob);
	wl_status st = WL_OK;
	int any_h = 0, wpn, whn;
	if (!sx || !sy || !sh || !wp || !wh || !chi || !chl || !rp || !rh) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory (%zu samples)", n);
		goto out;
	}
	for (size_t q = 0; q < w->npieces; q++)
		any_h |= w->phas_h[q];
	gp.chi_loc = gh.chi_loc = chl;
	/* Huber's constant at the 95% point of the distance of a model that
	 * fits: full weight for ordinary noise, bounded influence beyond */
	gp.huber_k = sqrt(chi2_q2(0.95));
	gh.huber_k = sqrt(chi2_q1(0.95));
	/* an outlier's density: uniform over a square metre of the tank, or
	 * over the circle of headings */
	gp.log_out = 0;
	gh.log_out = -log(2 * WL_PI);
	gp.cfg.r = rb->sigma_pos_m * rb->sigma_pos_m;
	gh.cfg.r = rb->sigma_heading_rad * rb->sigma_heading_rad;
	gp.cfg.q = p->q_pos > 0 ? p->q_pos : ml_q(w, &gp);
	gh.cfg.q = p->q_heading > 0 ? p->q_heading : any_h ? ml_q(w, &gh) : 1.0;
	rb->q_estimated = !(p->q_pos > 0) || !(p->q_heading > 0);
	rb->sigma_pos_est_m = rb->sigma_pos_m;
	rb->sigma_heading_est_rad = rb->sigma_heading_rad;
	rb->q_pos_est = gp.cfg.q;
	rb->q_heading_est = any_h ? gh.cfg.q : NAN;
	wpn = group_reject_widen(w, &gp, g2, p->max_reject_frac, w->mpos, chi, &nrej_p);
	whn = any_h ? group_reject_widen(w, &gh, g1, p->max_reject_frac, w->mh, chi, &nrej_h) : 0;
	if (wpn < 0 || whn < 0) {
		st = wl_err_set(err, WL_EINVAL,
		                "robot %ld: the smoother became singular: give noise levels "
		                "with --sigma-pos-m and --q-pos",
		                rb->id);
		goto out;
	}
	rb->widen_pos = wpn;
	rb->widen_heading = whn;
	rb->sigma_pos_m = sqrt(gp.cfg.r);
	rb->sigma_heading_rad = sqrt(gh.cfg.r);
	rb->q_pos = gp.cfg.q;
	rb->q_heading = any_h ? gh.cfg.q : NAN;
	rb->restarts_pos = count_restarts(w, &gp);
	rb->restarts_heading = any_h ? count_restarts(w, &gh) : 0;
	/* a detection rejected in either group is an outlier as a whole: both
	 * groups are run once more, unweighted, without the union of the
	 * rejected detections */
	for (size_t i = 0; i < n; i++) {
		w->why[i] = (unsigned char)(w->mpos[i] | w->mh[i] << 1);
		w->mpos[i] = w->mh[i] = w->why[i] != 0;
	}
	gp.wt = gh.wt = NULL;
	group_forward(w, &gp, w->mpos, 0);
	group_forward(w, &gh, w->mh, 0);
	if (!group_backward(w, &gp) || !group_backward(w, &gh)) {
		st = wl_err_set(err, WL_EINVAL, "robot %ld: the smoother became singular", rb->id);
		goto out;
	}
	for (size_t i = 0; i < n; i++) {
		w->x[i] = sx[i].xs[0];
		w->vx[i] = sx[i].xs[1];
		w->y[i] = sy[i].xs[0];
		w->vy[i] = sy[i].xs[1];
		w->sp[i] = sqrt(0.5 * (sx[i].Ps[IX(0, 0)] + sy[i].Ps[IX(0, 0)]));
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
	free(wp);
	free(wh);
	free(chi);
	free(chl);
	free(rp);
	free(rh);
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
		w->x[i] = sg_eval(w, w->zx, w->mpos, i, win, ord, 0, 0, &var);
		w->sp[i] = rb->sigma_pos_m * sqrt(var);
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
	rb->q_pos = rb->q_heading = rb->q_pos_est = rb->q_heading_est = NAN;
	free(uh);
	return WL_OK;
}
