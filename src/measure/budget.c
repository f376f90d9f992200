/*
 * budget.c: the systematic sources of a run's uncertainty budget (see
 * measure.h, wl_measure_budget): each direction of the camera part
 * (sysmodel.c) moves the run's positions, speeds and headings by ± one
 * standard deviation; the run is measured again and half the difference is
 * the direction's first-order effect on every measure.  Directions of one
 * source add in quadrature, and the sources with the fit's standard error.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "measure/measure_priv.h"

#include "core/angle.h"
#include "measure/measure.h"

/* Step of the finite differences of the displacement field that give its
 * local Jacobian (for speeds and headings): small against the field's
 * variation over the tank, large against rounding. */
#define JAC_STEP_M 0.005

/* The values of the measures with a budget, in wl_budget_measure's order. */
static void values(const wl_measure_result *r, double v[WL_BM_N])
{
	v[WL_BM_CURVATURE] = r->curvature_per_m;
	v[WL_BM_RADIUS] = NAN; /* from the curvature, below */
	v[WL_BM_SPEED] = r->mean_speed_mps;
	v[WL_BM_YAW_AMP] = r->yaw_osc_amp_deg;
	v[WL_BM_YAW_FREQ] = r->yaw_osc_freq_hz;
	v[WL_BM_STRAIGHTNESS] = r->straightness;
}

typedef struct {
	size_t n;
	int ndir;
	double *d;       /* per row, per direction: dx, dy, and the Jacobian dxx, dxy, dyx, dyy (6 values) */
	double *ux, *uy; /* per row: the direction of travel from the neighbouring positions */
	double *x, *y, *h, *hm, *sp; /* a perturbed copy of the input */
} work;

static void work_free(work *w)
{
	free(w->d);
	free(w->ux);
	free(w->uy);
	free(w->x);
	free(w->y);
	free(w->h);
	free(w->hm);
	free(w->sp);
}

/* The displacement of every row for every direction, and its Jacobian. */
static void fields(const wl_measure_input *in, const wl_measure_sys *sys, double z, work *w)
{
	double d0x[WL_SYS_MAX_DIR], d0y[WL_SYS_MAX_DIR], d1x[WL_SYS_MAX_DIR], d1y[WL_SYS_MAX_DIR],
	        d2x[WL_SYS_MAX_DIR], d2y[WL_SYS_MAX_DIR];
	for (size_t i = 0; i < in->n; i++) {
		double X = in->x_m[i], Y = in->y_m[i], *d = w->d + (size_t)6 * w->ndir * i;
		size_t a = i, b = i;
		int ok = isfinite(X) && isfinite(Y) && wl_measure_sys_displace(sys, X, Y, z, d0x, d0y) &&
		         wl_measure_sys_displace(sys, X + JAC_STEP_M, Y, z, d1x, d1y) &&
		         wl_measure_sys_displace(sys, X, Y + JAC_STEP_M, z, d2x, d2y);
		for (int k = 0; k < w->ndir; k++, d += 6) {
			d[0] = ok ? d0x[k] : 0;
			d[1] = ok ? d0y[k] : 0;
			d[2] = ok ? (d1x[k] - d0x[k]) / JAC_STEP_M : 0;
			d[3] = ok ? (d2x[k] - d0x[k]) / JAC_STEP_M : 0;
			d[4] = ok ? (d1y[k] - d0y[k]) / JAC_STEP_M : 0;
			d[5] = ok ? (d2y[k] - d0y[k]) / JAC_STEP_M : 0;
		}
		/* the direction of travel: the chord through the neighbouring positions */
		while (a > 0 && !isfinite(in->x_m[a - 1]))
			a--;
		if (a > 0)
			a--;
		while (b + 1 < in->n && !isfinite(in->x_m[b + 1]))
			b++;
		if (b + 1 < in->n)
			b++;
		w->ux[i] = w->uy[i] = 0;
		if (isfinite(in->x_m[a]) && isfinite(in->x_m[b])) {
			double ex = in->x_m[b] - in->x_m[a], ey = in->y_m[b] - in->y_m[a], l = hypot(ex, ey);
			if (l > 0)
				w->ux[i] = ex / l, w->uy[i] = ey / l;
		}
	}
}

/* A heading h turned by the map's local Jacobian I + s·D (d[2..5]). */
static double turn_heading(double h, const double *d, double s)
{
	double c = cos(h), sn = sin(h);
	return atan2(sn + s * (d[4] * c + d[5] * sn), c + s * (d[2] * c + d[3] * sn));
}

/* The input moved along direction k by s standard deviations: positions by
 * the displacement, speeds and headings through the map's local Jacobian
 * I + s·D (a speed along u becomes |(I + sD) u| times itself, a heading h
 * the direction of (I + sD)(cos h, sin h)). */
static void perturb(const wl_measure_input *in, const work *w, int k, double s, wl_measure_input *out)
{
	*out = *in;
	for (size_t i = 0; i < in->n; i++) {
		const double *d = w->d + (size_t)6 * w->ndir * i + (size_t)6 * k;
		w->x[i] = in->x_m[i] + s * d[0];
		w->y[i] = in->y_m[i] + s * d[1];
		if (in->speed_mps) {
			double ux = w->ux[i], uy = w->uy[i], vx = ux + s * (d[2] * ux + d[3] * uy),
			       vy = uy + s * (d[4] * ux + d[5] * uy);
			w->sp[i] = ux != 0 || uy != 0 ? in->speed_mps[i] * hypot(vx, vy) : in->speed_mps[i];
		}
		if (in->heading_rad)
			w->h[i] = turn_heading(in->heading_rad[i], d, s);
		if (in->heading_meas_rad)
			w->hm[i] = turn_heading(in->heading_meas_rad[i], d, s);
	}
	out->x_m = w->x;
	out->y_m = w->y;
	if (in->speed_mps)
		out->speed_mps = w->sp;
	if (in->heading_rad)
		out->heading_rad = w->h;
	if (in->heading_meas_rad)
		out->heading_meas_rad = w->hm;
}

wl_status wl_measure_budget(const wl_measure_input *in, const wl_measure_opts *opt, const wl_measure_sys *sys,
                            double plane_z_m, double plane_sd_m, wl_measure_result *r, wl_err *err)
{
	double var[WL_BM_N][WL_BS_N] = {{0}}, v0[WL_BM_N];
	int present[WL_BS_N] = {0};
	work w;
	wl_status st = WL_OK;
	memset(&w, 0, sizeof w);
	w.n = in->n;
	w.ndir = wl_measure_sys_ndir(sys);
	if (w.ndir == 0 || !isfinite(r->curvature_per_m))
		goto done;
	w.d = malloc((size_t)6 * w.ndir * (in->n ? in->n : 1) * sizeof *w.d);
	w.ux = malloc(in->n * sizeof *w.ux);
	w.uy = malloc(in->n * sizeof *w.uy);
	w.x = malloc(in->n * sizeof *w.x);
	w.y = malloc(in->n * sizeof *w.y);
	w.h = malloc(in->n * sizeof *w.h);
	w.hm = malloc(in->n * sizeof *w.hm);
	w.sp = malloc(in->n * sizeof *w.sp);
	if (!w.d || !w.ux || !w.uy || !w.x || !w.y || !w.h || !w.hm || !w.sp) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory for the uncertainty budget of %zu rows",
		                in->n);
		goto out;
	}
	fields(in, sys, plane_z_m, &w);
	values(r, v0);
	for (int k = 0; k < w.ndir; k++) {
		wl_budget_source src = wl_measure_sys_source(sys, k);
		double f = 1, vm[WL_BM_N], vp[WL_BM_N];
		wl_measure_result rm, rp;
		wl_measure_input pm, pp;
		if (src == WL_BS_PLANE_HEIGHT && isfinite(plane_sd_m))
			f = plane_sd_m / wl_measure_sys_sd(sys, k); /* the robot's own tolerance */
		perturb(in, &w, k, -f, &pm);
		if ((st = wl_measure_run_values(&pm, opt, &rm, err)))
			goto out;
		values(&rm, vm);
		perturb(in, &w, k, f, &pp);
		if ((st = wl_measure_run_values(&pp, opt, &rp, err)))
			goto out;
		values(&rp, vp);
		present[src] = 1;
		for (int m = 0; m < WL_BM_N; m++) {
			double d = 0.5 * (vp[m] - vm[m]);
			if (m == WL_BM_RADIUS)
				d = 0.5 * (vp[WL_BM_CURVATURE] - vm[WL_BM_CURVATURE]) /
				    (v0[WL_BM_CURVATURE] * v0[WL_BM_CURVATURE]);
			if (isfinite(d))
				var[m][src] += d * d;
		}
	}
	for (int m = 0; m < WL_BM_N; m++) {
		wl_summary_budget *b = &r->budget[m];
		double tot;
		if (!isfinite(b->se[WL_BS_FIT]))
			continue;
		tot = b->se[WL_BS_FIT] * b->se[WL_BS_FIT];
		for (int s = 1; s < WL_BS_N; s++)
			if (present[s]) {
				b->se[s] = sqrt(var[m][s]);
				tot += var[m][s];
			}
		b->total_se = sqrt(tot);
	}
done:
	wl_measure_set_intervals(r);
	/* the straight rule on the total interval: a curvature whose interval
	 * holds 0 gives no radius */
	if (!r->straight && !(r->curvature_ci95_per_m[0] > 0 || r->curvature_ci95_per_m[1] < 0)) {
		r->straight = 1;
		r->radius_m = r->radius_body_diameters = r->centre_x_m = r->centre_y_m = NAN;
		r->radius_ci95_m[0] = r->radius_ci95_m[1] = NAN;
		r->budget[WL_BM_RADIUS].total_se = NAN;
		for (int s = 0; s < WL_BS_N; s++)
			r->budget[WL_BM_RADIUS].se[s] = NAN;
	}
out:
	work_free(&w);
	return st;
}
