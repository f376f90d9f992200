/*
 * sysmodel.c: the camera part of the uncertainty budget (see measure.h,
 * wl_measure_sys): how a tank position on a marker plane moves when one of
 * the calibration's uncertain inputs moves by one standard deviation.
 *
 * Each input is a direction: the plane height (mapped again at h ± sd), an
 * assumed focal length or principal point and the water depth (the
 * calibration solved again from its own points, through the camera model,
 * with the input at ± sd and the rest as before), and the calibration's own
 * statistical uncertainty by the jackknife over its markers: the
 * calibration solved again without each marker in turn, by the same route
 * (so a focal length found from the homography is found again), each
 * replicate's map less their mean, times sqrt((g - 1) / g) for g
 * replicates, is a direction (Quenouille 1956, Tukey 1958: the jackknife
 * estimate of variance; cited from memory).  A tank point is projected to
 * its pixel with the calibration's camera and that pixel mapped back
 * through each perturbed calibration; half the difference of the + and -
 * maps is the displacement per standard deviation (central differences).
 *
 * This is the one function the budget's camera part sits behind: when
 * CAL.json carries the camera model's covariance (calib's
 * wl_calib_position_jacobian), the directions come from it instead.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "calib/calib.h"
#include "core/angle.h"
#include "core/camera.h"
#include "core/linalg.h"
#include "measure/measure.h"

/* Defaults (standard uncertainties), stated in docs/measure.md: a plane
 * height measured with a ruler against a floating robot, a water depth
 * likewise, a field of view from a data sheet, a principal point assumed at
 * the image centre (these agree with the calibration stage's defaults). */
#define DEF_PLANE_SD_M 0.002
#define DEF_WATER_SD_M 0.003
#define DEF_FOCAL_SD 0.02
#define DEF_PRINCIPAL_SD 0.02

void wl_measure_tolerances_init(wl_measure_tolerances *t)
{
	t->plane_height_sd_m = DEF_PLANE_SD_M;
	t->water_depth_sd_m = DEF_WATER_SD_M;
	t->focal_sd_frac = DEF_FOCAL_SD;
	t->principal_sd_frac = DEF_PRINCIPAL_SD;
	t->calib_jackknife = 1;
}

struct wl_measure_sys {
	wl_calib base; /* the calibration the positions came from */
	int ndir;
	int jk0, njk; /* directions jk0 .. jk0 + njk - 1 are jackknife replicates (cal[k][1]) */
	wl_budget_source src[WL_SYS_MAX_DIR];
	char name[WL_SYS_MAX_DIR][24];
	double sd[WL_SYS_MAX_DIR];        /* the input's standard uncertainty, in its unit */
	double dz[WL_SYS_MAX_DIR];        /* plane height offset of the direction (0 but for the plane) */
	wl_calib *cal[WL_SYS_MAX_DIR][2]; /* - and + (NULL: the base) */
};

/* The marker a calibration point belongs to: its id up to a '.' ("7.c0"
 * belongs to "7"). */
static int same_marker(const char *a, const char *b)
{
	size_t la = strcspn(a, "."), lb = strcspn(b, ".");
	return la == lb && strncmp(a, b, la) == 0;
}

/* The calibration solved again from the base's used points, without those
 * of marker `skip` (NULL: all), with the intrinsics of cam (the lens route;
 * NULL: the base's own route, the focal length found again from the
 * homography or the field of view), the points' tank positions scaled by
 * 1 + scale about their centroid, and the water depth water_m. */
static wl_status resolve(const wl_measure_sys *s, const wl_camera *cam, const char *skip, double scale,
                         double water_m, wl_calib **out, wl_err *err)
{
	const wl_calib *b = &s->base;
	wl_calib_point *pts = malloc(WL_CALIB_MAX_POINTS * sizeof *pts);
	wl_calib_report *rep = malloc(sizeof *rep);
	wl_calib_opts o;
	wl_camera lens = cam ? *cam : s->base.cam;
	double mx = 0, my = 0;
	int n = 0;
	wl_status st = WL_OK;
	*out = malloc(sizeof **out);
	if (!pts || !rep || !*out) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory for the uncertainty budget");
		goto out;
	}
	for (int i = 0; i < b->n_points; i++)
		if (b->points[i].used && !(skip && same_marker(b->points[i].id, skip))) {
			pts[n++] = b->points[i];
			mx += b->points[i].x_m;
			my += b->points[i].y_m;
		}
	if (n < 4) {
		st = wl_err_set(err, WL_ECALIB,
		                "the calibration holds %d used points: its uncertainty needs 4 or more", n);
		goto out;
	}
	mx /= n, my /= n;
	for (int i = 0; i < n; i++) {
		pts[i].x_m = mx + (1 + scale) * (pts[i].x_m - mx);
		pts[i].y_m = my + (1 + scale) * (pts[i].y_m - my);
	}
	memset(&o, 0, sizeof o);
	o.width_px = b->cam.width_px;
	o.height_px = b->cam.height_px;
	lens.water_depth_m = 0;
	if (cam)
		o.lens = &lens;
	else if (strcmp(b->intrinsics_source, "hfov") == 0)
		o.hfov_deg = 2 * atan(0.5 * b->cam.width_px / b->cam.K[0]) / WL_DEG;
	else if (strcmp(b->intrinsics_source, "lens") == 0)
		o.lens = &lens;
	o.water_depth_m = water_m;
	o.water_index = b->cam.water_index > 0 ? b->cam.water_index : WL_WATER_INDEX;
	o.plane_height_m = b->plane_height_m;
	o.displayed = b->displayed;
	o.rotation_deg = b->rotation_deg;
	o.outlier_px = 1e9; /* the base's choice of points stands */
	st = wl_calib_solve(pts, n, &o, *out, rep, err);
out:
	free(pts);
	free(rep);
	if (st) {
		free(*out);
		*out = NULL;
	}
	return st;
}

/* Adds a direction whose - and + calibrations are solved with the
 * intrinsics cam_m / cam_p, scales sc_m / sc_p and water depths w_m / w_p. */
static wl_status add_solved(wl_measure_sys *s, wl_budget_source src, const char *name, double sd,
                            const wl_camera *cam_m, const wl_camera *cam_p, double sc_m, double sc_p,
                            double w_m, double w_p, wl_err *err)
{
	int k = s->ndir;
	wl_status st;
	if (k >= WL_SYS_MAX_DIR)
		return WL_OK;
	if ((st = resolve(s, cam_m, NULL, sc_m, w_m, &s->cal[k][0], err)) ||
	    (st = resolve(s, cam_p, NULL, sc_p, w_p, &s->cal[k][1], err)))
		return wl_err_prefix(err, st, "uncertainty budget, %s", name);
	s->src[k] = src;
	snprintf(s->name[k], sizeof s->name[k], "%s", name);
	s->sd[k] = sd;
	s->dz[k] = 0;
	s->ndir++;
	return WL_OK;
}

/* The calibration's own uncertainty: one jackknife replicate per marker
 * (per point when the points have no marker ids in common), solved by the
 * base's route.  A replicate that cannot be solved (too few points left, a
 * focal length no longer determined) is left out; with fewer than three
 * the source is left out. */
static void add_jackknife(wl_measure_sys *s)
{
	const wl_calib *b = &s->base;
	char(*seen)[32] = malloc(WL_CALIB_MAX_POINTS * sizeof *seen);
	int ng = 0;
	if (!seen)
		return;
	s->jk0 = s->ndir;
	s->njk = 0;
	for (int i = 0; i < b->n_points; i++) {
		int dup = 0;
		if (!b->points[i].used)
			continue;
		for (int j = 0; j < ng && !dup; j++)
			dup = same_marker(seen[j], b->points[i].id);
		if (!dup)
			snprintf(seen[ng++], sizeof seen[0], "%s", b->points[i].id);
	}
	for (int g = 0; g < ng && s->ndir < WL_SYS_MAX_DIR; g++) {
		int k = s->ndir;
		wl_err e2;
		char skip[32];
		snprintf(skip, sizeof skip, "%s", seen[g]);
		if (resolve(s, NULL, skip, 0, b->cam.water_depth_m, &s->cal[k][1], &e2) != WL_OK)
			continue;
		s->src[k] = WL_BS_CALIBRATION;
		snprintf(s->name[k], sizeof s->name[k], "without %.14s", skip);
		s->sd[k] = NAN;
		s->dz[k] = 0;
		s->ndir++;
		s->njk++;
	}
	if (s->njk < 3) {
		for (int k = s->jk0; k < s->ndir; k++) {
			free(s->cal[k][1]);
			s->cal[k][1] = NULL;
		}
		s->ndir = s->jk0;
		s->njk = 0;
	}
	free(seen);
}

wl_status wl_measure_sys_create(const wl_calib *cal, const wl_measure_tolerances *tol, wl_measure_sys **out,
                                wl_err *err)
{
	wl_measure_sys *s = calloc(1, sizeof *s);
	const char *route;
	wl_camera c_m, c_p;
	wl_status st = WL_OK;
	*out = NULL;
	if (!s)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the uncertainty budget");
	s->base = *cal;
	route = cal->intrinsics_source;
	/* the calibration's own uncertainty: the jackknife over its markers */
	if (tol->calib_jackknife)
		add_jackknife(s);
	/* the plane height: the same calibration, the plane moved */
	if (tol->plane_height_sd_m > 0 && s->ndir < WL_SYS_MAX_DIR) {
		int k = s->ndir++;
		s->src[k] = WL_BS_PLANE_HEIGHT;
		snprintf(s->name[k], sizeof s->name[k], "plane height");
		s->sd[k] = s->dz[k] = tol->plane_height_sd_m;
	}
	/* an assumed focal length (the field of view route) */
	if (strcmp(route, "hfov") == 0 && tol->focal_sd_frac > 0) {
		c_m = c_p = cal->cam;
		c_m.K[0] *= 1 - tol->focal_sd_frac, c_m.K[4] *= 1 - tol->focal_sd_frac;
		c_p.K[0] *= 1 + tol->focal_sd_frac, c_p.K[4] *= 1 + tol->focal_sd_frac;
		if ((st = add_solved(s, WL_BS_INTRINSICS, "f_px", tol->focal_sd_frac * cal->cam.K[0], &c_m,
		                     &c_p, 0, 0, cal->cam.water_depth_m, cal->cam.water_depth_m, err)))
			goto out;
	}
	/* an assumed principal point (every route but a lens or 3-D points) */
	if (strcmp(route, "lens") != 0 && strcmp(route, "points3d") != 0 && tol->principal_sd_frac > 0) {
		double d = tol->principal_sd_frac * cal->cam.width_px;
		double Hm[9];
		int refocus = strcmp(route, "homography") == 0 && wl_inv3(cal->H_px_to_m, Hm);
		for (int axis = 0; axis < 2; axis++) {
			c_m = c_p = cal->cam;
			c_m.K[axis ? 5 : 2] -= d;
			c_p.K[axis ? 5 : 2] += d;
			/* where the focal length came from the homography, it depends on
			 * the principal point assumed: found again for the moved one */
			if (refocus) {
				double fm, fp;
				if (wl_focal_from_homography(Hm, c_m.K[2], c_m.K[5], &fm) &&
				    wl_focal_from_homography(Hm, c_p.K[2], c_p.K[5], &fp)) {
					double f0;
					if (wl_focal_from_homography(Hm, cal->cam.K[2], cal->cam.K[5], &f0) &&
					    f0 > 0) {
						/* the ratio, applied to the refined focal length */
						c_m.K[0] *= fm / f0, c_m.K[4] *= fm / f0;
						c_p.K[0] *= fp / f0, c_p.K[4] *= fp / f0;
					}
				}
			}
			if ((st = add_solved(s, WL_BS_INTRINSICS, axis ? "cy_px" : "cx_px", d, &c_m, &c_p, 0,
			                     0, cal->cam.water_depth_m, cal->cam.water_depth_m, err)))
				goto out;
		}
	}
	/* the water depth */
	if (cal->cam.water_depth_m > 0 && tol->water_depth_sd_m > 0) {
		double d = fmin(tol->water_depth_sd_m, 0.5 * cal->cam.water_depth_m);
		if ((st = add_solved(s, WL_BS_WATER_DEPTH, "water_depth_m", d, &cal->cam, &cal->cam, 0, 0,
		                     cal->cam.water_depth_m - d, cal->cam.water_depth_m + d, err)))
			goto out;
	}
out:
	if (st) {
		wl_measure_sys_destroy(s);
		return st;
	}
	*out = s;
	return WL_OK;
}

void wl_measure_sys_destroy(wl_measure_sys *s)
{
	if (!s)
		return;
	for (int k = 0; k < WL_SYS_MAX_DIR; k++) {
		free(s->cal[k][0]);
		free(s->cal[k][1]);
	}
	free(s);
}

int wl_measure_sys_ndir(const wl_measure_sys *s)
{
	return s ? s->ndir : 0;
}

wl_budget_source wl_measure_sys_source(const wl_measure_sys *s, int k)
{
	return s->src[k];
}

const char *wl_measure_sys_name(const wl_measure_sys *s, int k)
{
	return s->name[k];
}

double wl_measure_sys_sd(const wl_measure_sys *s, int k)
{
	return s->sd[k];
}

int wl_measure_sys_displace(const wl_measure_sys *s, double x_m, double y_m, double z_m, double *dx,
                            double *dy)
{
	double X[3] = {x_m, y_m, z_m}, u, v;
	if (!wl_camera_project_water(&s->base.cam, X, &u, &v))
		return 0;
	for (int k = 0; k < s->ndir; k++) {
		double xm, ym, xp, yp;
		const wl_calib *cm = s->cal[k][0] ? s->cal[k][0] : &s->base,
		               *cp = s->cal[k][1] ? s->cal[k][1] : &s->base;
		if (k >= s->jk0 && k < s->jk0 + s->njk) {
			if (!wl_calib_pixel_to_plane(cp, u, v, z_m, &dx[k], &dy[k]))
				return 0;
			continue;
		}
		if (!wl_calib_pixel_to_plane(cm, u, v, z_m - s->dz[k], &xm, &ym) ||
		    !wl_calib_pixel_to_plane(cp, u, v, z_m + s->dz[k], &xp, &yp))
			return 0;
		dx[k] = 0.5 * (xp - xm);
		dy[k] = 0.5 * (yp - ym);
	}
	if (s->njk > 0) {
		/* the replicates about their mean, scaled to the jackknife variance */
		double mx = 0, my = 0, f = sqrt((s->njk - 1.0) / s->njk);
		for (int k = s->jk0; k < s->jk0 + s->njk; k++)
			mx += dx[k], my += dy[k];
		mx /= s->njk, my /= s->njk;
		for (int k = s->jk0; k < s->jk0 + s->njk; k++)
			dx[k] = f * (dx[k] - mx), dy[k] = f * (dy[k] - my);
	}
	return 1;
}
