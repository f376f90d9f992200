/*
 * solve.c: correspondences -> a full calibration (wl_calib_solve, see
 * calib.h): the floor homography with one outlier left out, the intrinsics
 * in the documented order, the pose refined through the camera model (with
 * refraction when the markers lie under water), and residuals in pixels
 * and millimetres.
 */
#include "calib/calib.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/angle.h"
#include "core/linalg.h"

#define RESIDUAL_WARN_PX 2.0
#define FOCAL_SPREAD_MAX 0.05 /* jackknife spread of f beyond which f counts as undetermined */

/* A warning for the user, through the options' wl_diag. */
static void warn(const wl_calib_report *rep, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void warn(const wl_calib_report *rep, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	wl_diag_vwarn(rep->diag, "calibrate", fmt, ap);
	va_end(ap);
}

typedef struct {
	int n;
	double xy[2 * WL_CALIB_MAX_POINTS];  /* tank x, y */
	double xyz[3 * WL_CALIB_MAX_POINTS]; /* tank x, y, z */
	double uv[2 * WL_CALIB_MAX_POINTS];  /* observed pixels */
	double uvi[2 * WL_CALIB_MAX_POINTS]; /* ideal pixels (distortion removed) */
	int used[WL_CALIB_MAX_POINTS];
	const char *id[WL_CALIB_MAX_POINTS]; /* the points' names, for messages */
} work;

/* Copies the used points (skip < 0: all used; else also leave out skip). */
static int gather(const work *w, int skip, double *xy, double *uv)
{
	int k = 0;
	for (int i = 0; i < w->n; i++) {
		if (!w->used[i] || i == skip)
			continue;
		xy[2 * k] = w->xy[2 * i];
		xy[2 * k + 1] = w->xy[2 * i + 1];
		uv[2 * k] = w->uvi[2 * i];
		uv[2 * k + 1] = w->uvi[2 * i + 1];
		k++;
	}
	return k;
}

static wl_status fit_h(const work *w, int skip, double H[9], double *rms, wl_err *err)
{
	double xy[2 * WL_CALIB_MAX_POINTS], uv[2 * WL_CALIB_MAX_POINTS];
	int k = gather(w, skip, xy, uv);
	wl_status st = wl_homography_dlt(xy, uv, k, H, err);
	if (st)
		return st;
	*rms = wl_homography_refine(xy, uv, k, H);
	return WL_OK;
}

static double h_resid(const double H[9], const work *w, int i)
{
	double u, v;
	if (!wl_homography_apply(H, w->xy[2 * i], w->xy[2 * i + 1], &u, &v))
		return INFINITY;
	return hypot(u - w->uvi[2 * i], v - w->uvi[2 * i + 1]);
}

/* Leave-one-out: the point whose removal leaves the best fit of the others,
 * if it lies clearly off that fit.  Needs n >= 6 (with 5 the other four
 * always fit exactly, so no point can be blamed). */
static void find_outlier(work *w, const wl_calib_opts *o, double H[9], wl_calib_report *rep)
{
	double thr = o->outlier_px > 0 ? o->outlier_px : 3.0, best = INFINITY, rms_all, Hall[9];
	int n_used = 0, who = -1;
	for (int i = 0; i < w->n; i++)
		n_used += w->used[i];
	if (fit_h(w, -1, Hall, &rms_all, NULL))
		return;
	memcpy(H, Hall, sizeof Hall);
	if (n_used < 6) {
		for (int i = 0; i < w->n; i++)
			if (w->used[i] && h_resid(Hall, w, i) > thr) {
				warn(rep,
				     "residuals up to %.1f px but with %d points the wrong one cannot be "
				     "told: "
				     "add points",
				     h_resid(Hall, w, i), n_used);
				break;
			}
		return;
	}
	{
		double second = INFINITY;
		int who2 = -1;
		for (int i = 0; i < w->n; i++) {
			double Hi[9], rms;
			if (!w->used[i] || fit_h(w, i, Hi, &rms, NULL))
				continue;
			if (rms < best) {
				second = best;
				who2 = who;
				best = rms;
				who = i;
			} else if (rms < second) {
				second = rms;
				who2 = i;
			}
		}
		if (who >= 0) {
			double Hi[9], rms, r;
			fit_h(w, who, Hi, &rms, NULL);
			r = h_resid(Hi, w, who);
			if (r > thr && r > 4 * rms) {
				/* another point whose removal fits about as well: the
				 * layout cannot tell them apart (e.g. three points on
				 * a line, one shifted along it) */
				if (who2 >= 0 && second < 3 * fmax(best, 0.2)) {
					warn(rep,
					     "one point is about %.0f px off, but the points cannot tell "
					     "whether it is "
					     "'%s' or '%s' (or another on the same line): check them, or add "
					     "points "
					     "off their lines",
					     r, w->id[who], w->id[who2]);
					return;
				}
				w->used[who] = 0;
				rep->outlier = who;
				rep->outlier_residual_px = r;
				memcpy(H, Hi, sizeof Hi);
			}
		}
	}
}

/* The jackknife spread of f (relative), 0 when it cannot be computed: with
 * fewer than 7 points the leave-one-out fits rest on 4 or 5 points and
 * scatter far more than f itself does, so only the tilt test applies. */
static double focal_spread(const work *w, double cx, double cy, double f)
{
	double s = 0;
	int k = 0, n_used = 0;
	for (int i = 0; i < w->n; i++)
		n_used += w->used[i];
	if (n_used < 7)
		return 0;
	for (int i = 0; i < w->n; i++) {
		double Hi[9], rms, fi;
		if (!w->used[i] || fit_h(w, i, Hi, &rms, NULL))
			continue;
		if (!wl_focal_from_homography(Hi, cx, cy, &fi))
			return INFINITY;
		s += (fi - f) * (fi - f);
		k++;
	}
	/* jackknife standard error: sqrt((k-1)/k · Σ (f_i - f)²) */
	return k > 1 ? sqrt((k - 1.0) / k * s) / f : 0;
}

static void finish_residuals(wl_calib *cal, const work *w, wl_calib_report *rep)
{
	double s_px = 0, s_mm = 0, worst = -1;
	int k = 0, kmm = 0;
	for (int i = 0; i < w->n; i++) {
		wl_calib_point *p = &cal->points[i];
		double u, v, x, y;
		p->residual_px = NAN;
		p->residual_mm = NAN;
		if (wl_camera_project_water(&cal->cam, w->xyz + 3 * i, &u, &v))
			p->residual_px = hypot(u - p->u_px, v - p->v_px);
		if (wl_calib_pixel_to_plane(cal, p->u_px, p->v_px, p->z_m, &x, &y))
			p->residual_mm = 1000 * hypot(x - p->x_m, y - p->y_m);
		p->used = w->used[i];
		if (!p->used)
			continue;
		if (isfinite(p->residual_px)) {
			s_px += p->residual_px * p->residual_px;
			k++;
			if (p->residual_px > worst) {
				worst = p->residual_px;
				rep->worst = i;
			}
		}
		if (isfinite(p->residual_mm)) {
			s_mm += p->residual_mm * p->residual_mm;
			kmm++;
		}
	}
	cal->rms_px = k ? sqrt(s_px / k) : NAN;
	cal->rms_mm = kmm ? sqrt(s_mm / kmm) : NAN;
	rep->n_used = k;
}

/* Floor homography pixels -> metres from the camera model (ideal pixels). */
static int floor_h_from_camera(const wl_camera *c, double Hpm[9])
{
	double G[9], P[9];
	for (int r = 0; r < 3; r++) {
		G[3 * r] = c->R[3 * r];
		G[3 * r + 1] = c->R[3 * r + 1];
		G[3 * r + 2] = c->t[r];
	}
	wl_mul3(c->K, G, P);
	if (!wl_inv3(P, Hpm))
		return 0;
	for (int i = 0; i < 9; i++)
		Hpm[i] /= Hpm[8];
	return 1;
}

static wl_status set_intrinsics(wl_calib *cal, const work *w, const wl_calib_opts *o, const double H[9],
                                wl_calib_report *rep, unsigned *flags, wl_err *err)
{
	double cx = (o->width_px - 1) / 2.0, cy = (o->height_px - 1) / 2.0, f = 0;
	int ok = wl_focal_from_homography(H, cx, cy, &f);
	if (ok) {
		rep->focal_from_h_px = f;
		rep->focal_spread = focal_spread(w, cx, cy, f);
		if (rep->focal_spread > FOCAL_SPREAD_MAX)
			ok = 0;
	}
	rep->focal_determined = ok;
	if (o->lens) {
		cal->cam = *o->lens;
		snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "lens");
		return WL_OK;
	}
	if (ok) {
		wl_camera_init(&cal->cam, o->width_px, o->height_px, f, f, cx, cy);
		snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "homography");
		*flags |= WL_POSE_FOCAL;
		return WL_OK;
	}
	if (o->hfov_deg > 0 && o->hfov_deg < 179) {
		f = (o->width_px / 2.0) / tan(o->hfov_deg * WL_DEG / 2);
		wl_camera_init(&cal->cam, o->width_px, o->height_px, f, f, cx, cy);
		snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "hfov");
		return WL_OK;
	}
	return wl_err_set(err, WL_ECALIB,
	                  "the markers do not determine the focal length (the view is too close to nadir, "
	                  "or the points are too few or too noisy): give the lens with --lens LENS.json (see "
	                  "'wakeline lens') or the horizontal field of view with --hfov-deg");
}

static wl_status solve_planar(wl_calib *cal, work *w, double z0, const wl_calib_opts *o, wl_calib_report *rep,
                              unsigned *flags, wl_err *err)
{
	double H[9], rms;
	wl_status st;
	{
		double xy[2 * WL_CALIB_MAX_POINTS], uv[2 * WL_CALIB_MAX_POINTS];
		int k = gather(w, -1, xy, uv), ijk[3], idx[WL_CALIB_MAX_POINTS], m = 0;
		for (int i = 0; i < w->n; i++)
			if (w->used[i])
				idx[m++] = i;
		if (k == 4 && wl_points_collinear_triple(xy, k, ijk))
			return wl_err_set(
			        err, WL_ECALIB,
			        "points '%s', '%s' and '%s' lie on one line, so four points do not fix a "
			        "homography: move one or add points",
			        w->id[idx[ijk[0]]], w->id[idx[ijk[1]]], w->id[idx[ijk[2]]]);
		if ((st = wl_homography_check_points(xy, k, "tank positions", err)) ||
		    (st = wl_homography_check_points(uv, k, "pixel positions", err)))
			return st;
	}
	if ((st = fit_h(w, -1, H, &rms, err)))
		return st;
	find_outlier(w, o, H, rep);
	/* scale H so that the points' homogeneous w are positive (in front) */
	{
		double w0 = H[6] * w->xy[0] + H[7] * w->xy[1] + H[8];
		if (w0 < 0)
			for (int i = 0; i < 9; i++)
				H[i] = -H[i];
	}
	if ((st = set_intrinsics(cal, w, o, H, rep, flags, err)))
		return st;
	if ((st = wl_pose_from_homography(H, &cal->cam, err)))
		return st;
	/* the homography's plane is z = z0: t = t_h - z0 r3 */
	for (int i = 0; i < 3; i++)
		cal->cam.t[i] -= z0 * cal->cam.R[3 * i + 2];
	if (!wl_inv3(H, cal->H_px_to_m))
		return wl_err_set(err, WL_ECALIB, "the homography is singular");
	for (int i = 0; i < 9; i++)
		cal->H_px_to_m[i] /= cal->H_px_to_m[8];
	return WL_OK;
}

static wl_status solve_3d(wl_calib *cal, work *w, const wl_calib_opts *o, unsigned *flags, wl_err *err)
{
	wl_camera cam;
	wl_status st;
	wl_camera_init(&cam, o->width_px, o->height_px, 0, 0, 0, 0);
	if (o->lens)
		cam = *o->lens;
	if ((st = wl_pose_from_points3d(w->xyz, w->uvi, w->n, &cam, err)))
		return st;
	cal->cam = cam;
	if (o->lens) {
		snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "lens");
	} else {
		snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "points3d");
		*flags |= WL_POSE_FOCAL;
	}
	return WL_OK;
}

static wl_status load_work(const wl_calib_point *pts, int n, const wl_calib_opts *o, work *w, wl_err *err)
{
	wl_camera lens;
	if (o->lens)
		lens = *o->lens;
	w->n = n;
	for (int i = 0; i < n; i++) {
		const wl_calib_point *p = &pts[i];
		if (!isfinite(p->u_px) || !isfinite(p->v_px) || !isfinite(p->x_m) || !isfinite(p->y_m) ||
		    !isfinite(p->z_m))
			return wl_err_set(err, WL_EINVAL, "point '%s': a coordinate is not a number", p->id);
		w->xy[2 * i] = p->x_m;
		w->xy[2 * i + 1] = p->y_m;
		w->xyz[3 * i] = p->x_m;
		w->xyz[3 * i + 1] = p->y_m;
		w->xyz[3 * i + 2] = p->z_m;
		w->uv[2 * i] = p->u_px;
		w->uv[2 * i + 1] = p->v_px;
		w->uvi[2 * i] = p->u_px;
		w->uvi[2 * i + 1] = p->v_px;
		if (o->lens) {
			double xd = (p->u_px - lens.K[2]) / lens.K[0], yd = (p->v_px - lens.K[5]) / lens.K[4],
			       x, y;
			wl_camera_undistort(&lens, xd, yd, &x, &y);
			w->uvi[2 * i] = lens.K[0] * x + lens.K[2];
			w->uvi[2 * i + 1] = lens.K[4] * y + lens.K[5];
		}
		w->used[i] = 1;
		w->id[i] = p->id;
	}
	return WL_OK;
}

/* The largest group of points at one height; returns its size. */
static int height_group(const work *w, double *z0)
{
	int best = 0;
	for (int i = 0; i < w->n; i++) {
		int k = 0;
		for (int j = 0; j < w->n; j++)
			k += fabs(w->xyz[3 * j + 2] - w->xyz[3 * i + 2]) <= 1e-9;
		if (k > best) {
			best = k;
			*z0 = w->xyz[3 * i + 2];
		}
	}
	return best;
}

/* Initial camera: from the homography of the largest group of points at
 * one height, or from the DLT of the projection when that fails and the
 * points span several heights. */
static wl_status initial_camera(wl_calib *cal, work *w, const wl_calib_opts *o, wl_calib_report *rep,
                                unsigned *flags, int *direct_h, wl_err *err)
{
	int saved[WL_CALIB_MAX_POINTS], group, planar;
	double z0 = 0;
	wl_status st = WL_ECALIB;
	group = height_group(w, &z0);
	planar = group == w->n;
	memcpy(saved, w->used, sizeof(int) * (size_t)w->n);
	if (group >= 4) {
		for (int i = 0; i < w->n; i++)
			if (fabs(w->xyz[3 * i + 2] - z0) > 1e-9)
				w->used[i] = 0;
		st = solve_planar(cal, w, z0, o, rep, flags, err);
		for (int i = 0; i < w->n; i++)
			if (fabs(w->xyz[3 * i + 2] - z0) > 1e-9)
				w->used[i] = saved[i];
		*direct_h = st == WL_OK && planar && z0 == 0 && !(o->water_depth_m > 0);
		if (st == WL_OK || planar || w->n < 6)
			return st;
	}
	if (w->n < 6)
		return wl_err_set(
		        err, WL_ECALIB,
		        "%d points, but only %d at one height: give at least 4 points at one height "
		        "or 6 spread over several",
		        w->n, group);
	*flags = 0;
	memset(rep, 0, sizeof *rep);
	rep->outlier = rep->worst = -1;
	memcpy(w->used, saved, sizeof(int) * (size_t)w->n);
	return solve_3d(cal, w, o, flags, err);
}

static wl_status solve(work *wk, const wl_calib_point *pts, int n, const wl_calib_opts *o, wl_calib *cal,
                       wl_calib_report *rep, wl_err *err)
{
	double rms;
	unsigned flags = 0;
	int direct_h = 0;
	wl_status st;
	wl_calib_init(cal);
	memset(rep, 0, sizeof *rep);
	rep->outlier = rep->worst = -1;
	rep->diag = o->diag;
	if (n < 4)
		return wl_err_set(err, WL_ECALIB,
		                  "%d usable point%s, calibration needs at least 4: add markers or points", n,
		                  n == 1 ? "" : "s");
	if (n > WL_CALIB_MAX_POINTS)
		return wl_err_set(err, WL_ELIMIT, "%d points, at most %d are supported", n,
		                  WL_CALIB_MAX_POINTS);
	if (o->width_px < 1 || o->height_px < 1)
		return wl_err_set(err, WL_EINVAL, "the image size is not known");
	if (o->lens && (o->lens->width_px != o->width_px || o->lens->height_px != o->height_px))
		return wl_err_set(
		        err, WL_ECALIB,
		        "the lens was calibrated at %dx%d but the image is %dx%d: calibrate the lens "
		        "at this resolution",
		        o->lens->width_px, o->lens->height_px, o->width_px, o->height_px);
	if ((st = load_work(pts, n, o, wk, err)))
		return st;
	if ((st = initial_camera(cal, wk, o, rep, &flags, &direct_h, err)))
		return st;
	cal->cam.width_px = o->width_px;
	cal->cam.height_px = o->height_px;
	if (o->water_depth_m > 0) {
		cal->cam.water_depth_m = o->water_depth_m;
		cal->cam.water_index = o->water_index > 0 ? o->water_index : WL_WATER_INDEX;
		flags |= WL_POSE_WATER;
	}
	if (flags & WL_POSE_FOCAL) /* settle the pose with f fixed, then free f */
		wl_pose_refine(&cal->cam, wk->xyz, wk->uv, wk->used, n, flags & ~(unsigned)WL_POSE_FOCAL);
	rms = wl_pose_refine(&cal->cam, wk->xyz, wk->uv, wk->used, n, flags);
	if (rms < 0)
		return wl_err_set(err, WL_ECALIB,
		                  "the pose refinement put a point behind the camera: check the points");
	if (wl_calib_camera_height_m(cal) <= cal->cam.water_depth_m)
		return wl_err_set(err, WL_ECALIB, "the camera comes out below the %s: check the points",
		                  cal->cam.water_depth_m > 0 ? "water surface" : "floor");
	if (!direct_h)
		floor_h_from_camera(&cal->cam, cal->H_px_to_m);
	cal->plane_height_m = o->plane_height_m;
	cal->displayed = o->displayed;
	cal->rotation_deg = o->rotation_deg;
	cal->n_points = n;
	memcpy(cal->points, pts, sizeof *pts * (size_t)n);
	finish_residuals(cal, wk, rep);
	rep->height_m = wl_calib_camera_height_m(cal);
	rep->tilt_deg = wl_calib_camera_tilt_deg(cal);
	if (rep->outlier >= 0)
		warn(rep, "point '%s' is %.1f px off the fit of the others: left out; check it",
		     pts[rep->outlier].id, rep->outlier_residual_px);
	for (int i = 0; i < n; i++)
		if (wk->used[i] && cal->points[i].residual_px > RESIDUAL_WARN_PX)
			warn(rep, "point '%s' has a residual of %.2f px (above %.0f px): check it", pts[i].id,
			     cal->points[i].residual_px, RESIDUAL_WARN_PX);
	if (rep->n_used == 4)
		warn(rep,
		     "exactly 4 points: the fit is exact and has no residual to judge it by; add points");
	return WL_OK;
}

wl_status wl_calib_solve(const wl_calib_point *pts, int n, const wl_calib_opts *o, wl_calib *cal,
                         wl_calib_report *rep, wl_err *err)
{
	work *wk = malloc(sizeof *wk); /* ~30 kB of scratch */
	wl_status st;
	if (!wk) {
		wl_calib_init(cal);
		memset(rep, 0, sizeof *rep);
		return wl_err_set(err, WL_ENOMEM, "out of memory for the calibration");
	}
	st = solve(wk, pts, n, o, cal, rep, err);
	rep->diag = NULL; /* borrowed for the call only */
	free(wk);
	return st;
}
