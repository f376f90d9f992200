/*
 * solve.c: correspondences -> a full calibration (wl_calib_solve, see
 * calib.h): the floor homography with one outlier left out, the route that
 * fixes the focal length (and, with points at several heights, the
 * principal point), the pose refined through the camera model (with
 * refraction when the markers lie under water), the lens distortion chosen
 * by leave-one-marker-out residual, the covariance of the result, and
 * residuals in pixels and millimetres.
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
#define FOCAL_SPREAD_MAX 0.05    /* jackknife spread of f beyond which f counts as undetermined */
#define HEIGHT_SD_DEFAULT_M 0.01 /* a tape-measured camera height: +-1 cm (common practice) */
#define PLANE_SD_DEFAULT_M 0.002 /* a ruler-measured marker height: +-2 mm (common practice) */
#define WATER_SD_DEFAULT_M 0.003 /* a ruler-measured water depth: +-3 mm (common practice) */
#define PRINCIPAL_SD_FRACTION                                                                                \
	0.02                    /* assumed principal point: within 2% of the width of the                    \
	                         * centre (phones and webcams, common practice) */
#define HFOV_F_SD_FRACTION 0.02 /* a field of view from a data sheet: f to 2% (our choice) */
#define MODEL_GAIN                                                                                           \
	0.03 /* a richer distortion model must lower the leave-out                                           \
	      * residual by 3% to be chosen (our choice) */

/* What the route fits: the parameters, the height prior, what is assumed. */
typedef struct {
	unsigned free;
	double height_m, height_sd_m; /* height_sd_m > 0: prior */
	double height_cov_sd_m;       /* > 0: the prior's deviation in the covariance */
	int principal_assumed;
	double f_sd_px; /* > 0: f assumed (field of view) with this uncertainty */
} plan;

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

/* The camera height of a pose from H with focal length f (pp at cx, cy). */
static double height_with_f(const double H[9], double f, double cx, double cy, int w, int h)
{
	wl_camera c;
	double C[3];
	wl_camera_init(&c, w, h, f, f, cx, cy);
	if (wl_pose_from_homography(H, &c, NULL) != WL_OK)
		return NAN;
	wl_camera_position(&c, C);
	return C[2];
}

static const char refuse_msg[] =
        "the markers do not determine the focal length (the view is within 10 deg of nadir, or the "
        "points are too few or too noisy): give the camera height (--camera-height-m, the lens's "
        "height above the floor), raise one floor marker on a block (z_m in the layout; this also "
        "fixes the principal point), measure the robots' tags over a run (--refine-with CLIP "
        "--tag-size-m S), or give --lens LENS.json or --hfov-deg";

/* The intrinsics' starting values and the route's plan, in the documented
 * order: lens, measured camera height, oblique view, field of view.  With
 * points at several heights (multi) and nothing else, WL_ECALIB quietly: the
 * caller takes the projection DLT. */
static wl_status set_intrinsics(wl_calib *cal, const work *w, const wl_calib_opts *o, const double H[9],
                                int multi, wl_calib_report *rep, plan *pl, wl_err *err)
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
	pl->free = WL_CP_POSE;
	if (o->lens) {
		cal->cam = *o->lens;
		snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "lens");
		snprintf(cal->route, sizeof cal->route, WL_CALIB_ROUTE_LENS);
		return WL_OK;
	}
	if (o->camera_height_m > 0) {
		if (!ok) {
			/* near nadir the homography fixes f / height: scale a guess */
			double f0 = o->width_px / (2 * tan(30 * WL_DEG)),
			       z0 = height_with_f(H, f0, cx, cy, o->width_px, o->height_px);
			if (!(z0 > 0))
				return wl_err_set(err, WL_ECALIB, "the homography gives no camera pose");
			f = f0 * o->camera_height_m / z0;
		}
		wl_camera_init(&cal->cam, o->width_px, o->height_px, f, f, cx, cy);
		snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "homography");
		snprintf(cal->route, sizeof cal->route, "%s",
		         o->height_route ? o->height_route : WL_CALIB_ROUTE_HEIGHT);
		pl->free |= WL_CP_BIT(WL_CP_F);
		pl->height_m = o->camera_height_m;
		pl->height_sd_m = o->camera_height_sd_m > 0 ? o->camera_height_sd_m : HEIGHT_SD_DEFAULT_M;
		if (o->camera_height_fit_sd_m > 0) {
			pl->height_cov_sd_m = pl->height_sd_m;
			pl->height_sd_m = o->camera_height_fit_sd_m;
		}
		pl->principal_assumed = 1;
		return WL_OK;
	}
	if (ok) {
		wl_camera_init(&cal->cam, o->width_px, o->height_px, f, f, cx, cy);
		snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "homography");
		snprintf(cal->route, sizeof cal->route, WL_CALIB_ROUTE_OBLIQUE);
		pl->free |= WL_CP_BIT(WL_CP_F);
		pl->principal_assumed = 1;
		return WL_OK;
	}
	if (multi)
		return WL_ECALIB; /* the caller goes on to the projection DLT */
	if (o->hfov_deg > 0 && o->hfov_deg < 179) {
		f = (o->width_px / 2.0) / tan(o->hfov_deg * WL_DEG / 2);
		wl_camera_init(&cal->cam, o->width_px, o->height_px, f, f, cx, cy);
		snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "hfov");
		snprintf(cal->route, sizeof cal->route, WL_CALIB_ROUTE_HFOV);
		pl->principal_assumed = 1;
		pl->f_sd_px = HFOV_F_SD_FRACTION * f;
		return WL_OK;
	}
	return wl_err_set(err, WL_ECALIB, "%s", refuse_msg);
}

static wl_status solve_planar(wl_calib *cal, work *w, double z0, int multi, const wl_calib_opts *o,
                              wl_calib_report *rep, plan *pl, wl_err *err)
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
	if ((st = set_intrinsics(cal, w, o, H, multi, rep, pl, err)))
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

static wl_status solve_3d(wl_calib *cal, work *w, const wl_calib_opts *o, plan *pl, wl_err *err)
{
	wl_camera cam;
	wl_status st;
	wl_camera_init(&cam, o->width_px, o->height_px, 0, 0, 0, 0);
	if (o->lens)
		cam = *o->lens;
	if ((st = wl_pose_from_points3d(w->xyz, w->uvi, w->n, &cam, err)))
		return st;
	cal->cam = cam;
	pl->free = WL_CP_POSE;
	if (o->lens) {
		snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "lens");
		snprintf(cal->route, sizeof cal->route, WL_CALIB_ROUTE_LENS);
	} else {
		snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "points3d");
		pl->free |= WL_CP_BIT(WL_CP_F);
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
 * points span several heights.  With several heights and no lens, the
 * route is "raised_markers": the principal point is fitted too. */
static wl_status initial_camera(wl_calib *cal, work *w, const wl_calib_opts *o, wl_calib_report *rep,
                                plan *pl, int *direct_h, wl_err *err)
{
	int saved[WL_CALIB_MAX_POINTS], group, planar, multi;
	double z0 = 0;
	wl_status st = WL_ECALIB;
	group = height_group(w, &z0);
	planar = group == w->n;
	multi = !planar && w->n >= 6;
	memcpy(saved, w->used, sizeof(int) * (size_t)w->n);
	if (group >= 4) {
		for (int i = 0; i < w->n; i++)
			if (fabs(w->xyz[3 * i + 2] - z0) > 1e-9)
				w->used[i] = 0;
		st = solve_planar(cal, w, z0, multi, o, rep, pl, err);
		for (int i = 0; i < w->n; i++)
			if (fabs(w->xyz[3 * i + 2] - z0) > 1e-9)
				w->used[i] = saved[i];
		*direct_h = st == WL_OK && planar && z0 == 0 && !(o->water_depth_m > 0);
		if (st == WL_OK && multi && !o->lens)
			goto raised;
		if (st == WL_OK || planar || w->n < 6)
			return st;
	}
	if (w->n < 6)
		return wl_err_set(
		        err, WL_ECALIB,
		        "%d points, but only %d at one height: give at least 4 points at one height "
		        "or 6 spread over several",
		        w->n, group);
	{
		const wl_diag *d = rep->diag; /* the planar try's report is dropped, not the channel */
		memset(rep, 0, sizeof *rep);
		rep->diag = d;
	}
	rep->outlier = rep->worst = -1;
	memcpy(w->used, saved, sizeof(int) * (size_t)w->n);
	memset(pl, 0, sizeof *pl);
	if ((st = solve_3d(cal, w, o, pl, err)) || o->lens)
		return st;
raised:
	snprintf(cal->route, sizeof cal->route, WL_CALIB_ROUTE_RAISED);
	pl->free = WL_CP_POSE | WL_CP_BIT(WL_CP_F) | WL_CP_BIT(WL_CP_CX) | WL_CP_BIT(WL_CP_CY);
	pl->principal_assumed = 0;
	pl->f_sd_px = 0;
	if (o->camera_height_m > 0) {
		pl->height_m = o->camera_height_m;
		pl->height_sd_m = o->camera_height_sd_m > 0 ? o->camera_height_sd_m : HEIGHT_SD_DEFAULT_M;
	}
	return WL_OK;
}

static wl_camfit_opts fit_opts(const plan *pl, unsigned extra)
{
	wl_camfit_opts fo;
	memset(&fo, 0, sizeof fo);
	fo.free = pl->free | extra;
	fo.height_m = pl->height_m;
	fo.height_sd_m = pl->height_sd_m;
	fo.height_cov_sd_m = pl->height_cov_sd_m;
	return fo;
}

/* ---- distortion from the points themselves ---- */

/* The models form a chain, each extending its parent by one step:
 * none -> k1 -> k1k2 -> k1k2k3 or k1k2p1p2. */
static const struct {
	const char *name;
	unsigned bits;
	int n;
	int parent; /* the model this one extends (-1: none) */
} dist_models[] = {
        {"none", 0, 0, -1},
        {"k1", WL_CP_BIT(WL_CP_K1), 1, 0},
        {"k1k2", WL_CP_BIT(WL_CP_K1) | WL_CP_BIT(WL_CP_K2), 2, 1},
        {"k1k2k3", WL_CP_BIT(WL_CP_K1) | WL_CP_BIT(WL_CP_K2) | WL_CP_BIT(WL_CP_K3), 3, 2},
        {"k1k2p1p2", WL_CP_BIT(WL_CP_K1) | WL_CP_BIT(WL_CP_K2) | WL_CP_BIT(WL_CP_P1) | WL_CP_BIT(WL_CP_P2), 4,
         2},
};
#define N_DIST_MODELS ((int)(sizeof dist_models / sizeof dist_models[0]))

/* Groups of points that are left out together: a marker's centre and
 * corners ("7", "7.c0".."7.c3"), every other point on its own.  Returns
 * the number of groups among the used points. */
static int point_groups(const work *w, int *grp)
{
	int ng = 0;
	for (int i = 0; i < w->n; i++) {
		const char *dot = strchr(w->id[i], '.');
		size_t len = dot ? (size_t)(dot - w->id[i]) : strlen(w->id[i]);
		grp[i] = -1;
		if (!w->used[i])
			continue;
		for (int j = 0; j < i && grp[i] < 0; j++) {
			const char *dj = strchr(w->id[j], '.');
			size_t lj = dj ? (size_t)(dj - w->id[j]) : strlen(w->id[j]);
			if (grp[j] >= 0 && dot && dj && lj == len && strncmp(w->id[i], w->id[j], len) == 0)
				grp[i] = grp[j];
		}
		if (grp[i] < 0)
			grp[i] = ng++;
	}
	return ng;
}

/* Enough well-spread points to say anything about distortion?  NULL if
 * so, else the reason. */
static const char *spread_problem(const work *w, const wl_camera *cam, int n_groups)
{
	double hd = 0.5 * hypot(cam->width_px, cam->height_px), rmax = 0;
	int quad[4] = {0}, nq = 0, n_used = 0;
	for (int i = 0; i < w->n; i++) {
		double du, dv;
		if (!w->used[i])
			continue;
		n_used++;
		du = w->uv[2 * i] - cam->K[2];
		dv = w->uv[2 * i + 1] - cam->K[5];
		rmax = fmax(rmax, hypot(du, dv));
		quad[(du >= 0) + 2 * (dv >= 0)] = 1;
	}
	for (int k = 0; k < 4; k++)
		nq += quad[k];
	if (n_used < 16 || n_groups < 5)
		return "too few points (16 in 5 markers or more are needed)";
	if (rmax < 0.5 * hd || nq < 3)
		return "the points do not reach the outer half of the image in three quadrants";
	return NULL;
}

/* Fits model m to all used points (from start) and by leave-one-group-out.
 * Returns the fitted camera in *out. */
static void try_model(const work *w, const int *grp, int ng, const plan *pl, int m, const wl_camera *start,
                      wl_calib_model *res, wl_camera *out)
{
	wl_camfit_opts fo = fit_opts(pl, dist_models[m].bits);
	int used2[WL_CALIB_MAX_POINTS], k = 0;
	double s = 0;
	*out = *start;
	memset(out->dist, 0, sizeof out->dist);
	snprintf(res->name, sizeof res->name, "%s", dist_models[m].name);
	res->n_terms = dist_models[m].n;
	res->fit_rms_px = wl_camfit(out, w->xyz, w->uv, w->used, w->n, &fo, NULL);
	res->cv_rms_px = INFINITY;
	if (res->fit_rms_px < 0)
		return;
	for (int g = 0; g < ng; g++) {
		wl_camera c = *out;
		for (int i = 0; i < w->n; i++)
			used2[i] = w->used[i] && grp[i] != g;
		if (wl_camfit(&c, w->xyz, w->uv, used2, w->n, &fo, NULL) < 0)
			return;
		for (int i = 0; i < w->n; i++) {
			double u, v;
			if (grp[i] != g)
				continue;
			if (!wl_camera_project_water(&c, w->xyz + 3 * i, &u, &v))
				return;
			s += (u - w->uv[2 * i]) * (u - w->uv[2 * i]) +
			     (v - w->uv[2 * i + 1]) * (v - w->uv[2 * i + 1]);
			k++;
		}
	}
	if (k > 0)
		res->cv_rms_px = sqrt(s / k);
}

/* Chooses the distortion model by leave-one-marker-out residual, one step
 * at a time along the chain: of the models that extend the one chosen so
 * far, the one that predicts the left-out markers best is taken when it
 * does so MODEL_GAIN better; otherwise the choice stops.  A term is never
 * taken on the strength of a richer model alone (with a few markers, k3
 * can lower the leave-out residual by chance where k1 and k1k2 do not). */
static void choose_distortion(wl_calib *cal, const work *w, const wl_calib_opts *o, plan *pl,
                              wl_calib_report *rep)
{
	int grp[WL_CALIB_MAX_POINTS], ng = point_groups(w, grp), best = 0;
	const char *why =
	        o->no_distortion ? "not estimated (--no-distortion)" : spread_problem(w, &cal->cam, ng);
	wl_camera cams[N_DIST_MODELS];
	size_t len;
	snprintf(cal->distortion_model, sizeof cal->distortion_model, "none");
	if (why) {
		snprintf(rep->distortion_note, sizeof rep->distortion_note, "distortion: none (%s)", why);
		return;
	}
	for (int m = 0; m < N_DIST_MODELS; m++) {
		try_model(w, grp, ng, pl, m, &cal->cam, &rep->models[m], &cams[m]);
		rep->n_models = m + 1;
	}
	for (;;) {
		int next = -1;
		for (int m = 1; m < N_DIST_MODELS; m++)
			if (dist_models[m].parent == best &&
			    (next < 0 || rep->models[m].cv_rms_px < rep->models[next].cv_rms_px))
				next = m;
		if (next < 0 ||
		    !(rep->models[next].cv_rms_px < (1 - MODEL_GAIN) * rep->models[best].cv_rms_px))
			break;
		best = next;
	}
	if (!isfinite(rep->models[best].cv_rms_px))
		best = 0;
	cal->cam = cams[best];
	pl->free |= dist_models[best].bits;
	snprintf(cal->distortion_model, sizeof cal->distortion_model, "%s", dist_models[best].name);
	len = (size_t)snprintf(rep->distortion_note, sizeof rep->distortion_note,
	                       "distortion: %s, chosen by leave-one-marker-out residual (%.3f px; a model "
	                       "with more terms must predict %.0f%% better):",
	                       dist_models[best].name, rep->models[best].cv_rms_px, 100 * MODEL_GAIN);
	for (int m = 0; m < rep->n_models && len < sizeof rep->distortion_note; m++)
		len += (size_t)snprintf(rep->distortion_note + len, sizeof rep->distortion_note - len,
		                        " %s %.3f px%s", rep->models[m].name, rep->models[m].cv_rms_px,
		                        m + 1 < rep->n_models ? "," : "");
}

/* ---- uncertainty ---- */

/* The final fit with the covariance: fitted parameters from the plan, the
 * assumed ones (principal point, field of view, water depth) with their
 * uncertainties. */
static int final_fit(wl_calib *cal, const work *w, const plan *pl, double *rms)
{
	wl_camfit_opts fo = fit_opts(pl, 0);
	wl_camfit_result res;
	if (pl->principal_assumed) {
		fo.assumed_sd[WL_CP_CX] = fo.assumed_sd[WL_CP_CY] = cal->principal_sd_px;
	}
	if (pl->f_sd_px > 0)
		fo.assumed_sd[WL_CP_F] = pl->f_sd_px;
	if (cal->cam.water_depth_m > 0)
		fo.assumed_sd[WL_CP_WATER] = cal->water_depth_sd_m;
	fo.want_cov = 1;
	*rms = wl_camfit(&cal->cam, w->xyz, w->uv, w->used, w->n, &fo, &res);
	if (*rms < 0)
		return 0;
	cal->sigma_px = res.sigma_px;
	cal->n_cov = res.n_params;
	memcpy(cal->cov_param, res.param, sizeof res.param);
	memcpy(cal->cov, res.cov, sizeof res.cov);
	return 1;
}

/* The standard deviation of parameter k in the calibration's covariance
 * (NAN if not there). */
static double param_sd(const wl_calib *cal, int k)
{
	for (int a = 0; a < cal->n_cov; a++)
		if (cal->cov_param[a] == k)
			return sqrt(fmax(0, cal->cov[a * cal->n_cov + a]));
	return NAN;
}

/* The position offset (mm per metre of plane height) that an error of one
 * assumed-principal-point standard deviation causes once the pose has
 * absorbed it: the camera refitted with the principal point moved, and
 * pixels over the image mapped to a raised plane with both cameras. */
static double principal_offset(const wl_calib *cal, const work *w, const plan *pl)
{
	double worst = 0, C[3], href;
	wl_camera_position(&cal->cam, C);
	href = 0.25 * (C[2] - fmax(0, cal->cam.water_depth_m));
	if (!(href > 0))
		return NAN;
	for (int axis = 0; axis < 2; axis++) {
		wl_camera c = cal->cam;
		wl_camfit_opts fo = fit_opts(pl, 0);
		c.K[axis == 0 ? 2 : 5] += cal->principal_sd_px;
		if (wl_camfit(&c, w->xyz, w->uv, w->used, w->n, &fo, NULL) < 0)
			return NAN;
		for (int gy = 0; gy < 3; gy++)
			for (int gx = 0; gx < 3; gx++) {
				double u = (0.1 + 0.4 * gx) * (c.width_px - 1),
				       v = (0.1 + 0.4 * gy) * (c.height_px - 1);
				double x0, y0, x1, y1, z = C[2] - href;
				if (!wl_camera_pixel_to_plane_water(&cal->cam, u, v, z, &x0, &y0) ||
				    !wl_camera_pixel_to_plane_water(&c, u, v, z, &x1, &y1))
					continue;
				worst = fmax(worst, hypot(x1 - x0, y1 - y0));
			}
	}
	/* the offset is ~0 on the floor and grows with the plane's height */
	return 1000 * worst / (C[2] - href);
}

static void route_note(const wl_calib *cal, const wl_calib_opts *o, const wl_calib_report *rep, char *buf,
                       size_t cap)
{
	double f = cal->cam.K[0];
	if (!strcmp(cal->route, WL_CALIB_ROUTE_LENS))
		snprintf(buf, cap,
		         "route: lens (focal length and principal point from the lens calibration)");
	else if (!strcmp(cal->route, WL_CALIB_ROUTE_RAISED))
		snprintf(
		        buf, cap,
		        "route: raised markers (points at several heights): focal length %.1f +- %.1f px and "
		        "principal point (%.1f, %.1f) +- (%.1f, %.1f) px fitted; the camera's position over "
		        "the tank is fixed by parallax",
		        f, param_sd(cal, WL_CP_F), cal->cam.K[2], cal->cam.K[5], rep->principal_cx_sd_px,
		        rep->principal_cy_sd_px);
	else if (!strcmp(cal->route, WL_CALIB_ROUTE_HEIGHT) || !strcmp(cal->route, WL_CALIB_ROUTE_TAGS))
		snprintf(buf, cap,
		         "route: %s (%.3f +- %.3f m): focal length %.1f +- %.1f px from the floor homography "
		         "and the height; floor positions do not depend on the height, raised planes scale "
		         "by about (1 - plane/height)",
		         !strcmp(cal->route, WL_CALIB_ROUTE_TAGS) ? "camera height from the robots' tags"
		                                                  : "measured camera height",
		         o->camera_height_m, cal->camera_height_sd_m, f, param_sd(cal, WL_CP_F));
	else if (!strcmp(cal->route, WL_CALIB_ROUTE_OBLIQUE))
		snprintf(buf, cap,
		         "route: oblique view: focal length %.1f +- %.1f px from the floor homography (Zhang "
		         "2000)",
		         f, param_sd(cal, WL_CP_F));
	else
		snprintf(buf, cap,
		         "route: field of view (--hfov-deg): focal length %.1f px assumed to %.0f%%; the "
		         "camera height and raised planes are only as good as the field of view",
		         f, 100 * HFOV_F_SD_FRACTION);
}

static wl_status solve(work *wk, const wl_calib_point *pts, int n, const wl_calib_opts *o, wl_calib *cal,
                       wl_calib_report *rep, wl_err *err)
{
	double rms;
	int direct_h = 0;
	plan pl;
	wl_camfit_opts fo;
	wl_status st;
	wl_calib_init(cal);
	memset(rep, 0, sizeof *rep);
	memset(&pl, 0, sizeof pl);
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
	if ((st = initial_camera(cal, wk, o, rep, &pl, &direct_h, err)))
		return st;
	cal->cam.width_px = o->width_px;
	cal->cam.height_px = o->height_px;
	cal->plane_height_sd_m = o->plane_height_sd_m > 0 ? o->plane_height_sd_m : PLANE_SD_DEFAULT_M;
	cal->water_depth_sd_m = o->water_depth_m > 0
	                                ? (o->water_depth_sd_m > 0 ? o->water_depth_sd_m : WATER_SD_DEFAULT_M)
	                                : 0;
	cal->camera_height_sd_m = pl.height_cov_sd_m > 0 ? pl.height_cov_sd_m : pl.height_sd_m;
	cal->camera_height_given_m = pl.height_sd_m > 0 ? pl.height_m : 0;
	cal->principal_assumed = pl.principal_assumed;
	cal->principal_sd_px =
	        pl.principal_assumed
	                ? (o->principal_sd_px > 0 ? o->principal_sd_px : PRINCIPAL_SD_FRACTION * o->width_px)
	                : 0;
	if (o->water_depth_m > 0) {
		cal->cam.water_depth_m = o->water_depth_m;
		cal->cam.water_index = o->water_index > 0 ? o->water_index : WL_WATER_INDEX;
	}
	/* settle the pose with the intrinsics fixed, then fit the route's parameters */
	fo = fit_opts(&pl, 0);
	fo.free = WL_CP_POSE;
	fo.height_sd_m = 0;
	wl_camfit(&cal->cam, wk->xyz, wk->uv, wk->used, n, &fo, NULL);
	fo = fit_opts(&pl, 0);
	rms = wl_camfit(&cal->cam, wk->xyz, wk->uv, wk->used, n, &fo, NULL);
	if (rms < 0)
		return wl_err_set(err, WL_ECALIB,
		                  "the pose refinement put a point behind the camera: check the points");
	if (o->lens)
		snprintf(cal->distortion_model, sizeof cal->distortion_model, "lens");
	else
		choose_distortion(cal, wk, o, &pl, rep);
	if (!final_fit(cal, wk, &pl, &rms))
		return wl_err_set(err, WL_ECALIB,
		                  "the pose refinement put a point behind the camera: check the points");
	rep->principal_cx_sd_px = param_sd(cal, WL_CP_CX);
	rep->principal_cy_sd_px = param_sd(cal, WL_CP_CY);
	if (!strcmp(cal->route, WL_CALIB_ROUTE_RAISED) &&
	    !(fmax(rep->principal_cx_sd_px, rep->principal_cy_sd_px) <=
	      PRINCIPAL_SD_FRACTION * o->width_px)) {
		/* the heights are too close, or too few points are raised: keep the centre */
		warn(rep,
		     "the raised points do not fix the principal point (uncertainty %.0f px): it is assumed "
		     "at the image centre; raise a marker higher or near the image's edge",
		     fmax(rep->principal_cx_sd_px, rep->principal_cy_sd_px));
		cal->cam.K[2] = (o->width_px - 1) / 2.0;
		cal->cam.K[5] = (o->height_px - 1) / 2.0;
		pl.free &= ~(WL_CP_BIT(WL_CP_CX) | WL_CP_BIT(WL_CP_CY));
		pl.principal_assumed = cal->principal_assumed = 1;
		cal->principal_sd_px = PRINCIPAL_SD_FRACTION * o->width_px;
		if (!final_fit(cal, wk, &pl, &rms))
			return wl_err_set(err, WL_ECALIB, "the pose refinement failed: check the points");
		rep->principal_cx_sd_px = rep->principal_cy_sd_px = NAN;
	}
	if (wl_calib_camera_height_m(cal) <= cal->cam.water_depth_m)
		return wl_err_set(err, WL_ECALIB, "the camera comes out below the %s: check the points",
		                  cal->cam.water_depth_m > 0 ? "water surface" : "floor");
	if (pl.principal_assumed) {
		cal->principal_offset_mm_per_m = principal_offset(cal, wk, &pl);
		rep->principal_offset_mm = cal->principal_offset_mm_per_m * o->plane_height_m;
	}
	if (!direct_h || cal->cam.dist[0] != 0 || cal->cam.dist[1] != 0)
		floor_h_from_camera(&cal->cam, cal->H_px_to_m);
	cal->plane_height_m = o->plane_height_m;
	cal->displayed = o->displayed;
	cal->rotation_deg = o->rotation_deg;
	cal->n_points = n;
	memcpy(cal->points, pts, sizeof *pts * (size_t)n);
	finish_residuals(cal, wk, rep);
	rep->height_m = wl_calib_camera_height_m(cal);
	rep->tilt_deg = wl_calib_camera_tilt_deg(cal);
	route_note(cal, o, rep, rep->route_note, sizeof rep->route_note);
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
