/*
 * params.c: the clean stage's parameters (defaults and range checks) and the
 * distance to the tank outline that the wall cut uses (see clean.h; defaults
 * in docs/clean.md).
 */
#include "clean/clean.h"

#include <math.h>
#include <string.h>

#include "clean/sg.h"

#include "clean/clean_work.h"

void wl_clean_params_init(wl_clean_params *p)
{
	memset(p, 0, sizeof *p);
	p->smoother = WL_CLEAN_RTS;
	p->model_dim = 2;
	p->sigma_pos_m = p->sigma_heading_rad = -1;
	p->q_pos = p->q_heading = -1;
	p->gate_prob = 0.999;
	p->max_reject_frac = 0.03;
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
	if (!(p->max_reject_frac > 0 && p->max_reject_frac < 1))
		return wl_err_set(err, WL_EINVAL, "--max-reject %g: give a share between 0 and 1",
		                  p->max_reject_frac);
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
