/*
 * filter.c: the causal filter of `wakeline live` (live.h): for each robot a
 * forward-only Kalman filter (Kalman 1960) on x, y and the heading, each a
 * constant-velocity axis with continuous white acceleration, built from the
 * offline smoother's own steps (clean/kin.h: wl_kin_start, _predict, _innov,
 * _update, _skip) so that live and offline share one model and one noise
 * structure; the offline smoother adds the backward pass, which needs the
 * future and stays offline.
 *
 * The prior at a (re)start is the offline smoother's: the first measurement
 * with the smoother's prior variances, so that the live state after n
 * samples equals the smoother's forward (filtered) state after the same n
 * samples (test_live checks it).  Innovations are gated like the offline
 * outlier gate: chi-square with 2 degrees of freedom on the position, 1 on
 * the heading.
 */
#include "live/live.h"

#include <math.h>
#include <string.h>

#include "core/angle.h"

#define IX(i, j) ((i)*3 + (j))
#define REJECTS_BEFORE_RESTART 3

void wl_live_filter_cfg_init(wl_live_filter_cfg *c)
{
	c->sigma_pos_m = 0.002;
	c->q_pos = 0.01;
	c->sigma_heading_rad = 0.035;
	c->q_heading = 1.0;
	c->gate_prob = 0.999;
	c->max_gap_s = 0.5;
}

wl_status wl_live_filter_cfg_check(const wl_live_filter_cfg *c, wl_err *err)
{
	if (!(c->sigma_pos_m > 0 && c->sigma_pos_m < 10))
		return wl_err_set(err, WL_EINVAL, "--sigma-pos-m must be above 0 and below 10 m");
	if (!(c->q_pos > 0 && c->q_pos < 1e6))
		return wl_err_set(err, WL_EINVAL, "--q-pos must be above 0 and below 1e6 m^2/s^3");
	if (!(c->sigma_heading_rad > 0 && c->sigma_heading_rad < 4))
		return wl_err_set(err, WL_EINVAL, "--sigma-heading-rad must be above 0 and below 4 rad");
	if (!(c->q_heading > 0 && c->q_heading < 1e8))
		return wl_err_set(err, WL_EINVAL, "--q-heading must be above 0 and below 1e8 rad^2/s^3");
	if (!(c->gate_prob >= 0 && c->gate_prob < 1))
		return wl_err_set(err, WL_EINVAL, "--gate must be from 0 (no gate) to below 1");
	if (!(c->max_gap_s > 0))
		return wl_err_set(err, WL_EINVAL, "--max-gap-s must be above 0");
	return WL_OK;
}

/* The offline smoother's axes (clean/smooth.c clean_smooth_rts): its priors, our noise. */
static void kin_cfgs(const wl_live_filter_cfg *c, wl_kin_cfg *pos, wl_kin_cfg *head)
{
	memset(pos, 0, sizeof *pos);
	memset(head, 0, sizeof *head);
	pos->dim = head->dim = 2;
	pos->q = c->q_pos;
	pos->r = c->sigma_pos_m * c->sigma_pos_m;
	pos->P0[0] = 1.0;
	pos->P0[1] = 1.0;
	head->q = c->q_heading;
	head->r = c->sigma_heading_rad * c->sigma_heading_rad;
	head->angular = 1;
	head->P0[0] = WL_PI * WL_PI;
	head->P0[1] = 100.0;
}

/* The chi-square quantile for probability p with 1 or 2 degrees of
 * freedom, by bisection on the distribution function: 2 dof has
 * F(x) = 1 - exp(-x/2), 1 dof F(x) = erf(sqrt(x/2)) (Abramowitz & Stegun
 * 26.4.4 and 26.4.5). */
static double chi2_quantile(double p, int dof)
{
	double lo = 0, hi = 200;
	for (int i = 0; i < 100; i++) {
		double mid = 0.5 * (lo + hi);
		double F = dof == 2 ? 1.0 - exp(-0.5 * mid) : erf(sqrt(0.5 * mid));
		if (F < p)
			lo = mid;
		else
			hi = mid;
	}
	return 0.5 * (lo + hi);
}

/* starts an axis at measurement z: the smoother's prior, then the update */
static void axis_start(const wl_kin_cfg *k, double z, wl_kin_step *s)
{
	double nu, S;
	wl_kin_start(k, z, s);
	wl_kin_innov(k, s, z, &nu, &S);
	wl_kin_update(k, s, nu, S);
}

static void axis_predict(const wl_kin_cfg *k, wl_kin_step *s, double dt)
{
	wl_kin_step next;
	wl_kin_predict(k, s, dt, &next);
	*s = next;
}

static void start_pos(wl_live_filter *f, const wl_kin_cfg *k, double t, double x, double y)
{
	axis_start(k, x, &f->x);
	axis_start(k, y, &f->y);
	f->started = 1;
	f->n_pos = 1;
	f->rejected = 0;
	f->t_last = f->t_seen = t;
}

/* position: gate, update, or count a rejection; returns 1 when used */
static int take_pos(wl_live_filter *f, const wl_kin_cfg *k, double gate2, double t, double x, double y)
{
	double nx, sx, ny, sy;
	wl_kin_innov(k, &f->x, x, &nx, &sx);
	wl_kin_innov(k, &f->y, y, &ny, &sy);
	if (gate2 > 0 && nx * nx / sx + ny * ny / sy > gate2) {
		wl_kin_skip(k, &f->x);
		wl_kin_skip(k, &f->y);
		if (++f->rejected >= REJECTS_BEFORE_RESTART) {
			/* the robot is really there: start afresh (the heading too) */
			start_pos(f, k, t, x, y);
			f->h_started = 0;
			return 1;
		}
		return 0;
	}
	wl_kin_update(k, &f->x, nx, sx);
	wl_kin_update(k, &f->y, ny, sy);
	f->n_pos++;
	f->rejected = 0;
	f->t_seen = t;
	return 1;
}

static void take_heading(wl_live_filter *f, const wl_kin_cfg *k, double gate1, double h)
{
	double nu, S;
	if (!f->h_started) {
		axis_start(k, h, &f->h);
		f->h_started = 1;
		f->n_head = 1;
		return;
	}
	wl_kin_innov(k, &f->h, h, &nu, &S);
	if (gate1 > 0 && nu * nu / S > gate1) {
		wl_kin_skip(k, &f->h);
		return;
	}
	wl_kin_update(k, &f->h, nu, S);
	f->n_head++;
}

void wl_live_filter_init(wl_live_filter *f)
{
	memset(f, 0, sizeof *f);
}

static void output(const wl_live_filter *f, wl_live_state *o)
{
	o->x_m = o->y_m = o->heading_rad = o->vx_mps = o->vy_mps = o->yaw_rate_radps = o->sd_v_mps = NAN;
	if (!f->started)
		return;
	o->x_m = f->x.xs[0];
	o->y_m = f->y.xs[0];
	if (f->n_pos >= 2) {
		o->vx_mps = f->x.xs[1];
		o->vy_mps = f->y.xs[1];
		o->sd_v_mps = sqrt(0.5 * (f->x.Ps[IX(1, 1)] + f->y.Ps[IX(1, 1)]));
	}
	if (f->h_started) {
		o->heading_rad = wl_wrap_pi(f->h.xs[0]);
		if (f->n_head >= 2)
			o->yaw_rate_radps = f->h.xs[1];
	}
}

void wl_live_filter_step(wl_live_filter *f, const wl_live_filter_cfg *c, double t, double x_m, double y_m,
                         double heading_rad, wl_live_state *out)
{
	wl_kin_cfg kp, kh;
	int have_pos = isfinite(x_m) && isfinite(y_m), have_h = isfinite(heading_rad);
	double gate2 = c->gate_prob > 0 ? chi2_quantile(c->gate_prob, 2) : 0;
	double gate1 = c->gate_prob > 0 ? chi2_quantile(c->gate_prob, 1) : 0;
	double dt;

	kin_cfgs(c, &kp, &kh);
	out->accepted = 0;
	if (f->started && t - f->t_seen > c->max_gap_s)
		f->started = f->h_started = 0;
	if (!f->started) {
		if (have_pos) {
			start_pos(f, &kp, t, x_m, y_m);
			f->h_started = 0;
			if (have_h)
				take_heading(f, &kh, 0, heading_rad);
			out->accepted = 1;
		}
		output(f, out);
		return;
	}
	dt = t > f->t_last ? t - f->t_last : 0;
	axis_predict(&kp, &f->x, dt);
	axis_predict(&kp, &f->y, dt);
	if (f->h_started)
		axis_predict(&kh, &f->h, dt);
	f->t_last = t;
	if (have_pos)
		out->accepted = take_pos(f, &kp, gate2, t, x_m, y_m);
	/* a detection left out is left out whole, as offline */
	if (have_h && (out->accepted || !have_pos))
		take_heading(f, &kh, gate1, heading_rad);
	output(f, out);
}
