/*
 * propagate.c: first-order propagation of the calibration's uncertainty to
 * positions on a plane (calib.h, wl_calib_position_jacobian): partial
 * derivatives of the pixel -> plane mapping with respect to the parameters
 * of CAL.json's covariance and to the user's inputs (plane height, water
 * depth), by central differences through the same camera model the tracker
 * uses.  The measures' uncertainty budget (issue 12) combines them with the
 * covariance; wl_calib_position_cov does it for one point.
 */
#include "calib/calib.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

static double step_for(int k, double v)
{
	if (k <= WL_CP_RZ)
		return 1e-7;
	if (k <= WL_CP_TZ)
		return 1e-7 * fmax(1, fabs(v));
	if (k == WL_CP_F)
		return 1e-5 * fmax(1, fabs(v));
	if (k == WL_CP_CX || k == WL_CP_CY)
		return 1e-3;
	return 1e-6;
}

/* Maps (u, v) to plane z through cal with parameter k moved by h (k < 0:
 * none). */
static int map_moved(const wl_calib *cal, int k, double h, double u, double v, double z, double *x, double *y)
{
	wl_calib c = *cal;
	if (k >= 0) {
		double p[WL_CP_N];
		wl_camparam_get(&c.cam, p);
		p[k] += h;
		wl_camparam_set(&c.cam, p);
	}
	return wl_calib_pixel_to_plane(&c, u, v, z, x, y);
}

wl_status wl_calib_position_jacobian(const wl_calib *cal, double u, double v, double z_m,
                                     wl_calib_jacobian *J, wl_err *err)
{
	double x0, y0, p[WL_CP_N];
	int has_water = 0;
	memset(J, 0, sizeof *J);
	if (!wl_calib_pixel_to_plane(cal, u, v, z_m, &x0, &y0))
		return wl_err_set(err, WL_ECALIB, "pixel (%.1f, %.1f) does not meet the plane %.3f m", u, v,
		                  z_m);
	wl_camparam_get(&cal->cam, p);
	for (int a = 0; a < cal->n_cov && a < WL_CP_N; a++) {
		int k = cal->cov_param[a];
		double h = step_for(k, p[k]), xp, yp, xm, ym;
		if (!map_moved(cal, k, h, u, v, z_m, &xp, &yp) || !map_moved(cal, k, -h, u, v, z_m, &xm, &ym))
			return wl_err_set(err, WL_ECALIB, "the mapping of (%.1f, %.1f) breaks when %s moves",
			                  u, v, wl_camparam_name(k));
		snprintf(J->name[J->n], sizeof J->name[0], "%s", wl_camparam_name(k));
		J->dx[J->n] = (xp - xm) / (2 * h);
		J->dy[J->n] = (yp - ym) / (2 * h);
		has_water |= k == WL_CP_WATER;
		J->n++;
	}
	J->n_cov = J->n;
	{
		double h = 1e-6, xp, yp, xm, ym;
		if (!wl_calib_pixel_to_plane(cal, u, v, z_m + h, &xp, &yp) ||
		    !wl_calib_pixel_to_plane(cal, u, v, z_m - h, &xm, &ym))
			return wl_err_set(err, WL_ECALIB, "the plane %.3f m is out of the model's reach",
			                  z_m);
		snprintf(J->name[J->n], sizeof J->name[0], "plane_height_m");
		J->dx[J->n] = (xp - xm) / (2 * h);
		J->dy[J->n] = (yp - ym) / (2 * h);
		J->sd[J->n] = cal->plane_height_sd_m;
		J->n++;
	}
	if (cal->cam.water_depth_m > 0 && !has_water) {
		double h = 1e-6, xp, yp, xm, ym;
		if (!map_moved(cal, WL_CP_WATER, h, u, v, z_m, &xp, &yp) ||
		    !map_moved(cal, WL_CP_WATER, -h, u, v, z_m, &xm, &ym))
			return wl_err_set(err, WL_ECALIB, "the mapping breaks when the water depth moves");
		snprintf(J->name[J->n], sizeof J->name[0], "water_depth_m");
		J->dx[J->n] = (xp - xm) / (2 * h);
		J->dy[J->n] = (yp - ym) / (2 * h);
		J->sd[J->n] = cal->water_depth_sd_m;
		J->n++;
	}
	return WL_OK;
}

wl_status wl_calib_position_cov(const wl_calib *cal, double u, double v, double z_m, double cov[4],
                                wl_err *err)
{
	wl_calib_jacobian J;
	wl_status st = wl_calib_position_jacobian(cal, u, v, z_m, &J, err);
	memset(cov, 0, 4 * sizeof *cov);
	if (st)
		return st;
	for (int a = 0; a < J.n_cov; a++)
		for (int b = 0; b < J.n_cov; b++) {
			double c = cal->cov[a * cal->n_cov + b];
			cov[0] += J.dx[a] * c * J.dx[b];
			cov[1] += J.dx[a] * c * J.dy[b];
			cov[3] += J.dy[a] * c * J.dy[b];
		}
	for (int k = J.n_cov; k < J.n; k++) {
		double s2 = J.sd[k] * J.sd[k];
		cov[0] += s2 * J.dx[k] * J.dx[k];
		cov[1] += s2 * J.dx[k] * J.dy[k];
		cov[3] += s2 * J.dy[k] * J.dy[k];
	}
	cov[2] = cov[1];
	return WL_OK;
}
