/*
 * tagscale.c: the camera height from the robots' own tags (calib.h,
 * wl_calib_solve_tags).  The floor homography fixes where every pixel
 * meets the floor, but near nadir not how far away the camera is.  A tag of
 * known printed size s on a plane h above the floor closes the gap: mapped
 * to the floor, its side measures L0 = s Z / (Z - h) (similar triangles
 * through the camera centre), so Z = h / (1 - s / L0).  Each sighting gives
 * one estimate; a run gives hundreds, and their mean is refined through the
 * full camera model (tilt, distortion, refraction) by a few Newton steps on
 * the tags' mean side measured on their own planes.
 */
#include "calib/calib.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#define SIZE_SD_DEFAULT_M 0.0002 /* a ruler-measured printed tag: +-0.2 mm (common practice) */
#define PLANE_SD_DEFAULT_M 0.002 /* as solve.c */
#define MIN_SIGHTINGS 10

/* Mean side of the sighting's square mapped to the plane z (NAN outside). */
static double side_on_plane(const wl_calib *cal, const wl_tag_sighting *s, double z)
{
	double P[4][2], L = 0;
	for (int k = 0; k < 4; k++)
		if (!wl_calib_pixel_to_plane(cal, s->p[k][0], s->p[k][1], z, &P[k][0], &P[k][1]))
			return NAN;
	for (int k = 0; k < 4; k++)
		L += hypot(P[(k + 1) % 4][0] - P[k][0], P[(k + 1) % 4][1] - P[k][1]);
	return L / 4;
}

static int cmp_double(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return (x > y) - (x < y);
}

/* Per-sighting heights from the floor mapping; keeps those within 4
 * robust standard deviations of the median (keep[i]); returns their count,
 * the mean height and its standard error. */
static int heights_from_floor(const wl_calib *cal, const wl_tag_sighting *s, int ns, int *keep, double *Z,
                              double *se)
{
	double *z = malloc(sizeof(double) * (size_t)ns * 2), *sorted, med, mad, sum = 0, ss = 0;
	int k = 0, m = 0;
	if (!z)
		return 0;
	sorted = z + ns;
	for (int i = 0; i < ns; i++) {
		double L0 = side_on_plane(cal, &s[i], 0), rho = s[i].size_m / L0;
		z[i] = NAN;
		if (isfinite(L0) && s[i].plane_height_m > 0 && rho < 1 && rho > 0)
			z[i] = s[i].plane_height_m / (1 - rho);
		if (isfinite(z[i]))
			sorted[k++] = z[i];
	}
	if (k < MIN_SIGHTINGS) {
		free(z);
		return 0;
	}
	qsort(sorted, (size_t)k, sizeof(double), cmp_double);
	med = sorted[k / 2];
	for (int i = 0; i < k; i++)
		sorted[i] = fabs(sorted[i] - med);
	qsort(sorted, (size_t)k, sizeof(double), cmp_double);
	mad = fmax(1.4826 * sorted[k / 2], 1e-6 * med);
	for (int i = 0; i < ns; i++) {
		keep[i] = isfinite(z[i]) && fabs(z[i] - med) <= 4 * mad;
		if (keep[i]) {
			sum += z[i];
			m++;
		}
	}
	*Z = sum / m;
	for (int i = 0; i < ns; i++)
		if (keep[i])
			ss += (z[i] - *Z) * (z[i] - *Z);
	*se = m > 1 ? sqrt(ss / (m - 1) / m) : INFINITY;
	free(z);
	return m;
}

wl_status wl_calib_solve_tags(const wl_calib_point *pts, int n, const wl_calib_opts *opts,
                              const wl_tag_sighting *s, int ns, double size_sd_m, wl_calib *cal,
                              wl_calib_report *rep, wl_tagscale *ts, wl_err *err)
{
	wl_calib_opts o = *opts;
	int *keep = NULL, m;
	double Z, se, h = 0, size = 0, plane_sd, sd;
	wl_status st;
	memset(ts, 0, sizeof *ts);
	ts->n_sightings = ns;
	if (ns < MIN_SIGHTINGS)
		return wl_err_set(err, WL_ECALIB,
		                  "%d sightings of the robots' tags, at least %d are needed: check the tag "
		                  "ids and sizes, or use a longer clip",
		                  ns, MIN_SIGHTINGS);
	if (!(keep = calloc((size_t)ns, sizeof *keep)))
		return wl_err_set(err, WL_ENOMEM, "out of memory for the tag sightings");
	/* a provisional camera: the floor mapping it gives does not depend on
	 * the height it assumes (near nadir) */
	if (!(o.camera_height_m > 0)) {
		o.camera_height_m = 2.0;
		o.camera_height_sd_m = 100.0;
	}
	o.height_route = WL_CALIB_ROUTE_TAGS;
	if ((st = wl_calib_solve(pts, n, &o, cal, rep, err)))
		goto out;
	m = heights_from_floor(cal, s, ns, keep, &Z, &se);
	if (m < MIN_SIGHTINGS) {
		st = wl_err_set(err, WL_ECALIB,
		                "the robots' tags do not give the camera height (%d usable sightings of %d): "
		                "the tags' plane must be above the floor (plane_height_m > 0) and tag_size_m "
		                "their printed size",
		                m, ns);
		goto out;
	}
	for (int i = 0; i < ns; i++)
		if (keep[i]) {
			h += s[i].plane_height_m / m;
			size += s[i].size_m / m;
		}
	plane_sd = opts->plane_height_sd_m > 0 ? opts->plane_height_sd_m : PLANE_SD_DEFAULT_M;
	if (!(size_sd_m > 0))
		size_sd_m = SIZE_SD_DEFAULT_M;
	for (int it = 0; it < 6; it++) {
		double e = 0, dZ;
		int k = 0;
		/* dZ/dh = Z/h; dZ/ds = Z (Z - h) / (h s) (from Z = h / (1 - s/L0)) */
		ts->sd_stat_m = se;
		ts->sd_plane_m = plane_sd * Z / h;
		ts->sd_size_m = size_sd_m * Z * (Z - h) / (h * size);
		sd = sqrt(se * se + ts->sd_plane_m * ts->sd_plane_m + ts->sd_size_m * ts->sd_size_m);
		/* the camera held at Z while Z is sought */
		o.camera_height_m = Z;
		o.camera_height_sd_m = sd;
		o.camera_height_fit_sd_m = 1e-5 * Z;
		if ((st = wl_calib_solve(pts, n, &o, cal, rep, err)))
			goto out;
		/* Newton step on the tags' mean relative size on their planes:
		 * d ln L_h / dZ = h / (Z (Z - h)) */
		for (int i = 0; i < ns; i++) {
			double Lh;
			if (!keep[i] || !isfinite(Lh = side_on_plane(cal, &s[i], s[i].plane_height_m)))
				continue;
			e += Lh / s[i].size_m - 1;
			k++;
		}
		if (k == 0)
			break;
		e /= k;
		ts->plane_scale = 1 - h / Z;
		dZ = -e * Z * (Z - h) / h;
		Z += dZ;
		if (!(Z > h) || !isfinite(Z)) {
			st = wl_err_set(err, WL_ECALIB,
			                "the robots' tags give no camera height above their plane");
			goto out;
		}
		if (fabs(dZ) < 1e-6 * Z)
			break;
	}
	/* the final fit follows the tags to their statistical precision; the
	 * tolerances of the plane height and the printed size enter the
	 * covariance (they are input errors, not disagreement with the floor) */
	o.camera_height_m = Z;
	o.camera_height_fit_sd_m = fmax(se, 1e-5 * Z);
	if ((st = wl_calib_solve(pts, n, &o, cal, rep, err)))
		goto out;
	ts->n_used = m;
	ts->height_m = Z;
	ts->sd_m = sd;
	ts->plane_scale = 1 - h / Z;
out:
	free(keep);
	return st;
}
