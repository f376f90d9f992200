/*
 * clean.c: the clean-and-segment stage over one robot at a time:
 *   1. pieces: detections closer than max_gap_s in time form a piece; the
 *      lost rows inside a piece are bridged ('filled'), longer gaps split;
 *   2. noise: measurement noise by a robust rule (MAD of the residual of each
 *      detection from the straight line through its two neighbours), process
 *      noise by maximum likelihood of the Kalman innovations;
 *   3. smoothing (Rauch-Tung-Striebel over a kinematic model, or local
 *      Savitzky-Golay fits in t) with chi-square gating of the detections;
 *   4. motion onset, settling (window of one heading-oscillation period),
 *      wall cut, segments; 5. rows, optionally resampled evenly.
 * Methods and defaults are documented in docs/clean.md.
 */
#include "clean/clean.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#define WL_PI 3.14159265358979323846
#define IX(i, j) ((i)*3 + (j))
#define MAX_OUTLIER_PASSES 4
/* the settling window is at most this many oscillation periods: longer
 * windows average noise better but a centred window over a speed-up is late
 * by about W^2 / (24 tau); 2 gave the smallest trim errors on the synthetic
 * runs of tests/e2e/0401 (18 seeds: |error| <= 0.27 s, period 0.5 s) */
#define SETTLE_MAX_MULT 2
/* RAW.csv `held` poses (refined against the image where the detector
 * missed) get this many times the measurement variance of a detection (3x
 * its standard deviation) in the RTS smoother, and are left out of the noise
 * estimate; tests/e2e/0310 measures held poses at about that spread */
#define HELD_VAR_SCALE 9.0

/* ---------------------------------------------------------------- helpers */

static double wrap_pi(double a)
{
	a = fmod(a + WL_PI, 2 * WL_PI);
	if (a < 0)
		a += 2 * WL_PI;
	return a - WL_PI;
}

/* Wrapped to (-pi, pi] as the conventions ask. */
static double wrap_out(double a)
{
	double w = wrap_pi(a);
	return w <= -WL_PI ? WL_PI : w;
}

static int cmp_double(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return x < y ? -1 : x > y;
}

/* Median of v[0..n-1] (reorders v). */
static double median(double *v, size_t n)
{
	if (n == 0)
		return NAN;
	qsort(v, n, sizeof *v, cmp_double);
	return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

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

/* ------------------------------------------------------------- parameters */

void wl_clean_params_init(wl_clean_params *p)
{
	memset(p, 0, sizeof *p);
	p->smoother = WL_CLEAN_RTS;
	p->model_dim = 2;
	p->sigma_pos_m = p->sigma_heading_rad = -1;
	p->q_pos = p->q_heading = -1;
	p->gate_prob = 0.999;
	p->sg_window = 11;
	p->sg_order = 2;
	p->max_gap_s = 0.5;
	p->trim = WL_TRIM_AUTO;
	p->settle_tol = 0.02;
	p->settle_yaw_tol_radps = 0.1;
	p->default_window_s = 1.0;
	p->min_speed_mps = 0.005;
	p->min_segment_s = 1.0;
	p->body_diameter_m = 0.1;
	p->wall_margin_m = -1;
}

wl_status wl_clean_params_check(const wl_clean_params *p, wl_err *err)
{
	if (p->model_dim != 2 && p->model_dim != 3)
		return wl_err_set(err, WL_EINVAL, "--model: must be 'cv' or 'ca'");
	if (!(p->gate_prob > 0.5 && p->gate_prob < 1.0 - 1e-12))
		return wl_err_set(err, WL_EINVAL, "--gate %g: give a probability between 0.5 and 1",
		                  p->gate_prob);
	if (p->smoother == WL_CLEAN_SG) {
		if (p->sg_window < 3 || p->sg_window > WL_SG_MAX_WINDOW || p->sg_window % 2 == 0)
			return wl_err_set(err, WL_EINVAL, "--sg-window %d: give an odd number from 3 to %d",
			                  p->sg_window, WL_SG_MAX_WINDOW);
		if (p->sg_order < 1 || p->sg_order > WL_SG_MAX_ORDER || p->sg_order >= p->sg_window)
			return wl_err_set(err, WL_EINVAL, "--sg-order %d: give 1 to %d, less than the window",
			                  p->sg_order, WL_SG_MAX_ORDER);
	}
	if (!(p->max_gap_s >= 0))
		return wl_err_set(err, WL_EINVAL, "--max-gap-s: must not be negative");
	if (p->trim == WL_TRIM_FIXED && !(p->trim_s >= 0))
		return wl_err_set(err, WL_EINVAL, "--trim: seconds must not be negative");
	if (!(p->body_diameter_m > 0))
		return wl_err_set(err, WL_EINVAL, "--body-diameter-m: must be positive");
	if (!(p->rate_hz >= 0) || p->rate_hz > 10000)
		return wl_err_set(err, WL_EINVAL, "--rate: give a rate from 0 (off) to 10000 Hz");
	if (!(p->settle_tol > 0) || !(p->default_window_s > 0) || !(p->min_segment_s >= 0))
		return wl_err_set(err, WL_EINVAL, "settling parameters must be positive");
	return WL_OK;
}

const char *wl_clean_status_name(wl_clean_status s)
{
	static const char *const n[] = {"measured", "filled", "outlier"};
	return n[s];
}

const char *wl_clean_cut_name(wl_clean_cut c)
{
	static const char *const n[] = {"", "start", "wall", "gap", "still"};
	return n[c];
}

double wl_clean_outline_dist(const wl_clean_params *p, double x, double y)
{
	double best = INFINITY;
	int inside = 0, n = p->n_outline;
	for (int i = 0, j = n - 1; i < n; j = i++) {
		double ax = p->outline_m[j][0], ay = p->outline_m[j][1];
		double bx = p->outline_m[i][0], by = p->outline_m[i][1];
		double ex = bx - ax, ey = by - ay, L2 = ex * ex + ey * ey;
		double u = L2 > 0 ? ((x - ax) * ex + (y - ay) * ey) / L2 : 0, d;
		u = u < 0 ? 0 : u > 1 ? 1 : u;
		d = hypot(x - (ax + u * ex), y - (ay + u * ey));
		if (d < best)
			best = d;
		if ((ay > y) != (by > y) && x < ax + (y - ay) * ex / ey)
			inside = !inside;
	}
	return inside ? best : -best;
}

/* ------------------------------------------------------ per-robot working */

typedef struct {
	size_t n;                 /* samples kept (in pieces) */
	size_t *src;              /* index into the raw track */
	int *piece;               /* piece number of each sample */
	double *t, *zx, *zy, *zh; /* measurements, NaN when none */
	double *rs;               /* measurement variance scale: 1, or HELD_VAR_SCALE for held poses */
	unsigned char *mpos, *mh; /* 1: rejected as outlier (after smoothing: the union) */
	unsigned char *why;       /* bit 0: position beyond the gate, bit 1: heading */
	/* smoothed state */
	double *x, *y, *h, *vx, *vy, *r, *sv, *sr;
	wl_clean_cut *cut;
	int *seg;
	size_t npieces;
	size_t *pstart;        /* first sample of each piece, pstart[npieces] = n */
	unsigned char *phas_h; /* piece has any heading */
	double dt_med;
} work;

static void work_free(work *w)
{
	free(w->src);
	free(w->piece);
	free(w->t);
	free(w->zx);
	free(w->zy);
	free(w->zh);
	free(w->rs);
	free(w->mpos);
	free(w->mh);
	free(w->why);
	free(w->x);
	free(w->y);
	free(w->h);
	free(w->vx);
	free(w->vy);
	free(w->r);
	free(w->sv);
	free(w->sr);
	free(w->cut);
	free(w->seg);
	free(w->pstart);
	free(w->phas_h);
	memset(w, 0, sizeof *w);
}

static int work_alloc(work *w, size_t n, size_t npieces)
{
	size_t m = n ? n : 1;
	w->n = n;
	w->npieces = npieces;
	w->src = calloc(m, sizeof *w->src);
	w->piece = calloc(m, sizeof *w->piece);
	w->t = calloc(m, sizeof *w->t);
	w->zx = calloc(m, sizeof *w->zx);
	w->zy = calloc(m, sizeof *w->zy);
	w->zh = calloc(m, sizeof *w->zh);
	w->rs = calloc(m, sizeof *w->rs);
	w->mpos = calloc(m, 1);
	w->mh = calloc(m, 1);
	w->why = calloc(m, 1);
	w->x = calloc(m, sizeof *w->x);
	w->y = calloc(m, sizeof *w->y);
	w->h = calloc(m, sizeof *w->h);
	w->vx = calloc(m, sizeof *w->vx);
	w->vy = calloc(m, sizeof *w->vy);
	w->r = calloc(m, sizeof *w->r);
	w->sv = calloc(m, sizeof *w->sv);
	w->sr = calloc(m, sizeof *w->sr);
	w->cut = calloc(m, sizeof *w->cut);
	w->seg = calloc(m, sizeof *w->seg);
	w->pstart = calloc(npieces + 1, sizeof *w->pstart);
	w->phas_h = calloc(npieces + 1, 1);
	return w->src && w->piece && w->t && w->zx && w->zy && w->zh && w->rs && w->mpos && w->mh && w->why &&
	       w->x && w->y && w->h && w->vx && w->vy && w->r && w->sv && w->sr && w->cut && w->seg &&
	       w->pstart && w->phas_h;
}

static int gap_push(wl_clean_robot *rb, double t0, double t1, int filled)
{
	wl_clean_gap *g = realloc(rb->gaps, (rb->ngaps + 1) * sizeof *g);
	if (!g)
		return 0;
	rb->gaps = g;
	g[rb->ngaps].t0_s = t0;
	g[rb->ngaps].t1_s = t1;
	g[rb->ngaps].filled = filled;
	rb->ngaps++;
	if (filled)
		rb->gaps_filled++;
	else
		rb->gaps_split++;
	return 1;
}

/* Splits the track into pieces at gaps longer than max_gap_s and copies the
 * kept samples into w. */
static wl_status build_pieces(const wl_clean_raw_track *tr, const wl_clean_params *p, wl_clean_robot *rb,
                              work *w, wl_err *err)
{
	size_t ndet = 0, npieces = 0, n = 0, prev = (size_t)-1, first = 0, k = 0;
	size_t *pf = NULL, *pl = NULL;
	double *dts = NULL;
	wl_status st = WL_OK;
	for (size_t i = 0; i < tr->n; i++)
		ndet += tr->s[i].has_pos;
	if (ndet == 0) {
		work_alloc(w, 0, 0);
		return WL_OK;
	}
	pf = malloc(ndet * sizeof *pf);
	pl = malloc(ndet * sizeof *pl);
	dts = malloc(ndet * sizeof *dts);
	if (!pf || !pl || !dts) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory");
		goto out;
	}
	for (size_t i = 0; i < tr->n; i++) {
		if (!tr->s[i].has_pos)
			continue;
		if (prev == (size_t)-1) {
			first = i;
		} else {
			double dt = tr->s[i].t_s - tr->s[prev].t_s;
			int split = dt > p->max_gap_s;
			if (i > prev + 1 && !gap_push(rb, tr->s[prev].t_s, tr->s[i].t_s, !split)) {
				st = wl_err_set(err, WL_ENOMEM, "out of memory");
				goto out;
			}
			if (split) {
				if (i == prev + 1 && !gap_push(rb, tr->s[prev].t_s, tr->s[i].t_s, 0)) {
					st = wl_err_set(err, WL_ENOMEM, "out of memory");
					goto out;
				}
				pf[npieces] = first;
				pl[npieces++] = prev;
				first = i;
			} else {
				dts[k++] = dt;
			}
		}
		prev = i;
	}
	pf[npieces] = first;
	pl[npieces++] = prev;
	for (size_t q = 0; q < npieces; q++)
		n += pl[q] - pf[q] + 1;
	if (!work_alloc(w, n, npieces)) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory (%zu samples)", n);
		goto out;
	}
	w->dt_med = k ? median(dts, k) : 1.0 / 30;
	n = 0;
	for (size_t q = 0; q < npieces; q++) {
		w->pstart[q] = n;
		for (size_t i = pf[q]; i <= pl[q]; i++, n++) {
			const wl_clean_raw_sample *s = &tr->s[i];
			w->src[n] = i;
			w->piece[n] = (int)q;
			w->t[n] = s->t_meas_s; /* the pose's own time (rolling shutter) */
			w->rs[n] = s->held ? HELD_VAR_SCALE : 1.0;
			w->zx[n] = s->has_pos ? s->x_m : NAN;
			w->zy[n] = s->has_pos ? s->y_m : NAN;
			w->zh[n] = s->has_pos && s->has_heading ? s->heading_rad : NAN;
			if (isfinite(w->zh[n]))
				w->phas_h[q] = 1;
		}
	}
	w->pstart[npieces] = n;
	rb->dropped = tr->n - n;
out:
	free(pf);
	free(pl);
	free(dts);
	return st;
}

/* -------------------------------------------------------- noise estimates */

/* Robust standard deviation of z: the residual of each measurement from the
 * line through its two neighbouring measurements, divided by its own
 * standard deviation in units of sigma, sqrt(1 + a^2 + b^2) (a, b the
 * interpolation weights, 1/2 each for even steps), then 1.4826 MAD (the
 * consistency factor of the normal distribution).  Angular data use wrapped
 * differences.  Returns NaN when there are fewer than 5 triples. */
static double mad_sigma(const work *w, const double *z, int angular)
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
					d1 = wrap_pi(d1);
					d2 = wrap_pi(d2);
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
	s = median(res, m);
	for (size_t i = 0; i < m; i++)
		res[i] = fabs(res[i] - s);
	s = 1.4826 * median(res, m);
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
			wl_kin_cfg c = g->cfg; /* a held pose's variance is inflated */
			c.r *= w->rs[i];
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
				wl_kin_innov(&c, &g->st[k][i], g->z[k][i], &nu[k], &S[k]);
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
				wl_kin_update(&c, &g->st[k][i], nu[k], S[k]);
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
				e = wrap_pi(e);
			chi += e * e / (g->cfg.r * w->rs[i]);
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

static wl_status smooth_rts(work *w, const wl_clean_params *p, wl_clean_robot *rb, wl_err *err)
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
			d = wrap_pi(w->zh[i] - ref);
			u[i] = ref + d;
			if (fabs(d) < WL_PI / 2)
				ref = u[i];
		}
	}
}

static wl_status smooth_sg(work *w, const wl_clean_params *p, wl_clean_robot *rb, wl_err *err)
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
				eh = wrap_pi(uh[i] - sg_eval(w, uh, w->mh, i, win, ord, 0, 1, &vh));
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

/* ------------------------------------------------------- trim, wall, cuts */

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
		per = median(iv, m);
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
	s = m ? 1.4826 * median(d, m) : 0;
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

static void cut_and_segment(work *w, const wl_clean_params *p, wl_clean_robot *rb)
{
	double *spd = malloc((w->n ? w->n : 1) * sizeof *spd), *tmp = malloc((w->n ? w->n : 1) * sizeof *tmp);
	double margin = p->wall_margin_m >= 0 ? p->wall_margin_m : 0.5 * p->body_diameter_m;
	size_t on, end, from, seg = 0, m = 0;
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
	rb->speed_sigma_mps = median(tmp, m);
	/* 5 sigma of one velocity component: a still robot's speed (Rayleigh)
	 * exceeds it with probability exp(-12.5) */
	rb->speed_threshold_mps = fmax(p->min_speed_mps, 5 * rb->speed_sigma_mps);
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
	on = find_onset(w, spd, rb->speed_threshold_mps);
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
	if (p->trim == WL_TRIM_AUTO)
		settle(w, p, rb, spd, on, end > on ? end : on);
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
}

static wl_status list_segments(const work *w, wl_clean_robot *rb, wl_err *err)
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

/* ----------------------------------------------------------------- rows */

static wl_clean_status status_of(const work *w, size_t i)
{
	if (!isfinite(w->zx[i]))
		return WL_ST_FILLED;
	return w->mpos[i] || w->mh[i] ? WL_ST_OUTLIER : WL_ST_MEASURED;
}

static int rows_reserve(wl_clean_result *res, size_t *cap, size_t more)
{
	if (res->nrows + more > *cap) {
		size_t c = *cap ? *cap : 1024;
		wl_clean_row *nr;
		while (c < res->nrows + more)
			c *= 2;
		if (!(nr = realloc(res->rows, c * sizeof *nr)))
			return 0;
		res->rows = nr;
		*cap = c;
	}
	return 1;
}

static void fill_row(wl_clean_row *o, const work *w, const wl_clean_raw_track *tr, size_t i)
{
	memset(o, 0, sizeof *o);
	o->t_s = w->t[i];
	o->frame = tr->s[w->src[i]].frame;
	o->id = tr->id;
	o->x_m = w->x[i];
	o->y_m = w->y[i];
	o->heading_rad = isfinite(w->h[i]) ? wrap_out(w->h[i]) : NAN;
	o->vx_mps = w->vx[i];
	o->vy_mps = w->vy[i];
	o->speed_mps = hypot(w->vx[i], w->vy[i]);
	o->yaw_rate_radps = w->r[i];
	o->segment = w->seg[i];
	o->status = status_of(w, i);
	o->cut = w->cut[i];
	o->pos_outlier = (w->why[i] & 1) != 0;
	o->heading_outlier = (w->why[i] & 2) != 0;
}

/* Cubic Hermite through (p0, v0) at 0 and (p1, v1) at T, at s in [0, T]:
 * for the constant-velocity model this is the smoothed mean between the
 * two samples (the posterior of integrated white noise is a cubic spline). */
static void hermite(double p0, double v0, double p1, double v1, double T, double s, double *p, double *v)
{
	double u = s / T, u2 = u * u, u3 = u2 * u;
	*p = (2 * u3 - 3 * u2 + 1) * p0 + (u3 - 2 * u2 + u) * T * v0 + (-2 * u3 + 3 * u2) * p1 +
	     (u3 - u2) * T * v1;
	*v = ((6 * u2 - 6 * u) * p0 + (3 * u2 - 4 * u + 1) * T * v0 + (-6 * u2 + 6 * u) * p1 +
	      (3 * u2 - 2 * u) * T * v1) /
	     T;
}

static wl_status emit_rows(const work *w, const wl_clean_raw_track *tr, const wl_clean_params *p,
                           wl_clean_result *res, size_t *cap, wl_clean_robot *rb, wl_err *err)
{
	if (p->rate_hz <= 0) {
		if (!rows_reserve(res, cap, w->n))
			return wl_err_set(err, WL_ENOMEM, "out of memory");
		for (size_t i = 0; i < w->n; i++)
			fill_row(&res->rows[res->nrows++], w, tr, i);
		rb->rows_out = w->n;
		return WL_OK;
	}
	for (size_t q = 0; q < w->npieces; q++) {
		size_t a = w->pstart[q], b = w->pstart[q + 1] - 1, j = a;
		double k0 = ceil(w->t[a] * p->rate_hz - 1e-9), k1 = floor(w->t[b] * p->rate_hz + 1e-9);
		if (k1 >= k0 && !rows_reserve(res, cap, (size_t)(k1 - k0) + 1))
			return wl_err_set(err, WL_ENOMEM, "out of memory");
		for (double k = k0; k <= k1; k++) {
			double t = k / p->rate_hz, T, s, vh;
			size_t near;
			wl_clean_row *o;
			while (j + 1 < b && w->t[j + 1] <= t)
				j++;
			if (j == b)
				j = b > a ? b - 1 : b;
			near = (b > a && t - w->t[j] > w->t[j + 1] - t) ? j + 1 : j;
			o = &res->rows[res->nrows++];
			fill_row(o, w, tr, near);
			o->t_s = t;
			if (b > a) {
				T = w->t[j + 1] - w->t[j];
				s = t - w->t[j];
				hermite(w->x[j], w->vx[j], w->x[j + 1], w->vx[j + 1], T, s, &o->x_m,
				        &o->vx_mps);
				hermite(w->y[j], w->vy[j], w->y[j + 1], w->vy[j + 1], T, s, &o->y_m,
				        &o->vy_mps);
				if (isfinite(w->h[j])) {
					hermite(w->h[j], w->r[j], w->h[j + 1], w->r[j + 1], T, s, &vh,
					        &o->yaw_rate_radps);
					o->heading_rad = wrap_out(vh);
				}
				o->speed_mps = hypot(o->vx_mps, o->vy_mps);
			}
			rb->rows_out++;
		}
	}
	return WL_OK;
}

/* ---------------------------------------------------------------- driver */

static wl_status clean_robot(const wl_clean_raw_track *tr, const wl_clean_params *p, wl_clean_robot *rb,
                             wl_clean_result *res, size_t *cap, wl_err *err)
{
	work w = {0};
	wl_status st;
	double s;
	rb->id = tr->id;
	rb->rows_in = tr->n;
	rb->t_first_s = tr->n ? tr->s[0].t_s : NAN;
	rb->t_last_s = tr->n ? tr->s[tr->n - 1].t_s : NAN;
	if ((st = build_pieces(tr, p, rb, &w, err)))
		goto out;
	if (w.n == 0) {
		rb->still = 1;
		rb->trim_reason = rb->end_reason = "no-detections";
		rb->onset_s = rb->trim_s = rb->wall_s = rb->period_s = rb->window_s = NAN;
		rb->sigma_pos_m = rb->sigma_heading_rad = rb->q_pos = rb->q_heading = NAN;
		rb->dropped = tr->n;
		goto out;
	}
	/* measurement noise: given, else the MAD rule, else a documented default
	 * (2 mm, 2 degrees) for tracks too short to estimate it */
	rb->sigma_estimated = !(p->sigma_pos_m > 0) || !(p->sigma_heading_rad > 0);
	if (p->sigma_pos_m > 0) {
		rb->sigma_pos_m = p->sigma_pos_m;
	} else {
		double sx = mad_sigma(&w, w.zx, 0), sy = mad_sigma(&w, w.zy, 0);
		s = isfinite(sx) && isfinite(sy) ? sqrt(0.5 * (sx * sx + sy * sy)) : 0.002;
		if (!isfinite(sx) || !isfinite(sy))
			rb->sigma_estimated = 2;
		rb->sigma_pos_m = fmax(s, 1e-5);
	}
	if (p->sigma_heading_rad > 0) {
		rb->sigma_heading_rad = p->sigma_heading_rad;
	} else {
		s = mad_sigma(&w, w.zh, 1);
		if (!isfinite(s))
			rb->sigma_estimated = 2;
		rb->sigma_heading_rad = fmax(isfinite(s) ? s : 0.035, 1e-4);
	}
	st = p->smoother == WL_CLEAN_SG ? smooth_sg(&w, p, rb, err) : smooth_rts(&w, p, rb, err);
	if (st)
		goto out;
	for (size_t i = 0; i < w.n; i++) {
		wl_clean_status ss = status_of(&w, i);
		rb->measured += ss == WL_ST_MEASURED;
		rb->filled += ss == WL_ST_FILLED;
		rb->outliers += ss == WL_ST_OUTLIER;
		rb->outliers_pos += (w.why[i] & 1) != 0;
		rb->outliers_heading += (w.why[i] & 2) != 0;
	}
	cut_and_segment(&w, p, rb);
	if ((st = list_segments(&w, rb, err)))
		goto out;
	st = emit_rows(&w, tr, p, res, cap, rb, err);
out:
	work_free(&w);
	return st;
}

static int cmp_row(const void *a, const void *b)
{
	const wl_clean_row *x = a, *y = b;
	if (x->t_s != y->t_s)
		return x->t_s < y->t_s ? -1 : 1;
	if (x->frame != y->frame)
		return x->frame < y->frame ? -1 : 1;
	return (x->id > y->id) - (x->id < y->id);
}

wl_status wl_clean_run(const wl_clean_raw *raw, const wl_clean_params *p, wl_clean_result *out, wl_err *err)
{
	wl_status st;
	size_t cap = 0;
	memset(out, 0, sizeof *out);
	if ((st = wl_clean_params_check(p, err)))
		return st;
	if (!(out->robots = calloc(raw->ntracks ? raw->ntracks : 1, sizeof *out->robots)))
		return wl_err_set(err, WL_ENOMEM, "out of memory");
	for (size_t k = 0; k < raw->ntracks; k++) {
		out->nrobots++;
		if ((st = clean_robot(&raw->tracks[k], p, &out->robots[k], out, &cap, err)))
			return wl_err_prefix(err, "%s: robot %ld", raw->path, raw->tracks[k].id);
	}
	if (out->nrows)
		qsort(out->rows, out->nrows, sizeof *out->rows, cmp_row);
	return WL_OK;
}

void wl_clean_result_release(wl_clean_result *res)
{
	if (!res)
		return;
	for (size_t k = 0; k < res->nrobots; k++) {
		free(res->robots[k].gaps);
		free(res->robots[k].segments);
	}
	free(res->robots);
	free(res->rows);
	memset(res, 0, sizeof *res);
}
