/*
 * rows.c: the clean stage's output rows of one robot: one per kept sample,
 * or evenly resampled at rate_hz through the cubic Hermite between the
 * smoothed samples (the smoothed mean of the constant-velocity model).
 */
#include "clean/clean.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/angle.h"

#include "clean/clean_work.h"

/* ----------------------------------------------------------------- rows */

wl_clean_status clean_status_of(const work *w, size_t i)
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
	o->heading_rad = isfinite(w->h[i]) ? wl_wrap_pi(w->h[i]) : NAN;
	o->heading_meas_rad = isfinite(w->zh[i]) && !w->mh[i] ? wl_wrap_pi(w->zh[i]) : NAN;
	o->vx_mps = w->vx[i];
	o->vy_mps = w->vy[i];
	o->speed_mps = hypot(w->vx[i], w->vy[i]);
	o->yaw_rate_radps = w->r[i];
	o->segment = w->seg[i];
	o->status = clean_status_of(w, i);
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

wl_status clean_emit_rows(const work *w, const wl_clean_raw_track *tr, const wl_clean_params *p,
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
					o->heading_rad = wl_wrap_pi(vh);
					/* the nearest detection's heading moved to t along
					 * the smoothed heading: its own deviation kept */
					if (isfinite(o->heading_meas_rad) && isfinite(w->h[near]))
						o->heading_meas_rad =
						        wl_wrap_pi(o->heading_meas_rad + vh - w->h[near]);
				}
				o->speed_mps = hypot(o->vx_mps, o->vy_mps);
			}
			rb->rows_out++;
		}
	}
	return WL_OK;
}
