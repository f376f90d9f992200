/*
 * sysmodel.c: the camera part of the uncertainty budget (see measure.h,
 * wl_measure_sys): how a tank position on a marker plane moves when one of
 * the calibration's uncertain inputs moves by one standard deviation.
 *
 * Each input is a direction: the plane height (mapped again at h ± sd), an
 * assumed focal length or principal point and the water depth (the
 * calibration solved again from its own points, through the camera model,
 * with the input at ± sd and the rest as before), and the calibration's own
 * statistical uncertainty, read from its residuals as a relative scale of
 * the floor map (the points' tank positions scaled by 1 ± sd about their
 * centroid and the calibration solved again).  A tank point is projected to
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
#include "core/camera.h"
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
	t->calib_scale_sd = NAN;
}

struct wl_measure_sys {
	wl_calib base; /* the calibration the positions came from */
	int ndir;
	wl_budget_source src[WL_SYS_MAX_DIR];
	char name[WL_SYS_MAX_DIR][24];
	double sd[WL_SYS_MAX_DIR];        /* the input's standard uncertainty, in its unit */
	double dz[WL_SYS_MAX_DIR];        /* plane height offset of the direction (0 but for the plane) */
	wl_calib *cal[WL_SYS_MAX_DIR][2]; /* - and + (NULL: the base) */
};

/* The calibration solved again from the base's used points with the
 * intrinsics of cam (the lens route), the points' tank positions scaled by
 * 1 + scale about their centroid, and the water depth water_m. */
static wl_status resolve(const wl_measure_sys *s, const wl_camera *cam, double scale, double water_m,
                         wl_calib **out, wl_err *err)
{
	const wl_calib *b = &s->base;
	wl_calib_point *pts = malloc(WL_CALIB_MAX_POINTS * sizeof *pts);
	wl_calib_report *rep = malloc(sizeof *rep);
	wl_calib_opts o;
	wl_camera lens = *cam;
	double mx = 0, my = 0;
	int n = 0;
	wl_status st = WL_OK;
	*out = malloc(sizeof **out);
	if (!pts || !rep || !*out) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory for the uncertainty budget");
		goto out;
	}
	for (int i = 0; i < b->n_points; i++)
		if (b->points[i].used) {
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
	if ((st = resolve(s, cam_m, sc_m, w_m, &s->cal[k][0], err)) ||
	    (st = resolve(s, cam_p, sc_p, w_p, &s->cal[k][1], err)))
		return wl_err_prefix(err, st, "uncertainty budget, %s", name);
	s->src[k] = src;
	snprintf(s->name[k], sizeof s->name[k], "%s", name);
	s->sd[k] = sd;
	s->dz[k] = 0;
	s->ndir++;
	return WL_OK;
}

/* The relative scale uncertainty of the floor map from the calibration's
 * residuals: a least-squares scale about the centroid of n points with
 * independent errors of sd sigma per coordinate has the standard error
 * sigma / sqrt(sum |p - centroid|^2); sigma = rms distance / sqrt 2. */
static double scale_sd(const wl_calib *b)
{
	double mx = 0, my = 0, ss = 0, sig;
	int n = 0;
	for (int i = 0; i < b->n_points; i++)
		if (b->points[i].used)
			mx += b->points[i].x_m, my += b->points[i].y_m, n++;
	if (n < 4 || !isfinite(b->rms_mm))
		return NAN;
	mx /= n, my /= n;
	for (int i = 0; i < b->n_points; i++)
		if (b->points[i].used)
			ss += (b->points[i].x_m - mx) * (b->points[i].x_m - mx) +
			      (b->points[i].y_m - my) * (b->points[i].y_m - my);
	sig = 1e-3 * b->rms_mm / sqrt(2.0);
	/* the fit has used up degrees of freedom: the residual rms understates sigma */
	if (n > 4)
		sig *= sqrt((double)n / (double)(n - 4));
	return ss > 0 ? sig / sqrt(ss) : NAN;
}

wl_status wl_measure_sys_create(const wl_calib *cal, const wl_measure_tolerances *tol, wl_measure_sys **out,
                                wl_err *err)
{
	wl_measure_sys *s = calloc(1, sizeof *s);
	const char *route;
	wl_camera c_m, c_p;
	double sd;
	wl_status st = WL_OK;
	*out = NULL;
	if (!s)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the uncertainty budget");
	s->base = *cal;
	route = cal->intrinsics_source;
	/* the calibration's own uncertainty: the floor map's scale */
	sd = isfinite(tol->calib_scale_sd) ? tol->calib_scale_sd : scale_sd(cal);
	if (sd > 0 && (st = add_solved(s, WL_BS_CALIBRATION, "floor_scale", sd, &cal->cam, &cal->cam, -sd, sd,
	                               cal->cam.water_depth_m, cal->cam.water_depth_m, err)))
		goto out;
	/* the plane height: the same calibration, the plane moved */
	if (tol->plane_height_sd_m > 0 && s->ndir < WL_SYS_MAX_DIR) {
		int k = s->ndir++;
		s->src[k] = WL_BS_PLANE_HEIGHT;
		snprintf(s->name[k], sizeof s->name[k], "plane_height_m");
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
		for (int axis = 0; axis < 2; axis++) {
			c_m = c_p = cal->cam;
			c_m.K[axis ? 5 : 2] -= d;
			c_p.K[axis ? 5 : 2] += d;
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
		if (!wl_calib_pixel_to_plane(cm, u, v, z_m - s->dz[k], &xm, &ym) ||
		    !wl_calib_pixel_to_plane(cp, u, v, z_m + s->dz[k], &xp, &yp))
			return 0;
		dx[k] = 0.5 * (xp - xm);
		dy[k] = 0.5 * (yp - ym);
	}
	return 1;
}
