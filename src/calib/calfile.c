/*
 * calfile.c: CAL.json, the calibration file that the tracker reads, and the
 * pixel -> tank-plane mapping through it (see calib.h; keys in
 * docs/calibrate.md).  Loading validates every key it needs and names the
 * file and the key in its errors.
 */
#define _POSIX_C_SOURCE 200809L
#include "calib/calib.h"

#include <cjson/cJSON.h>
#include <math.h>

#include <stdio.h>
#include <string.h>
#include <time.h>

#include "core/angle.h"
#include "core/jsonio.h"
#include "core/linalg.h"
#include "wl_version.h"

void wl_calib_init(wl_calib *cal)
{
	memset(cal, 0, sizeof *cal);
	wl_camera_init(&cal->cam, 0, 0, 1, 1, 0, 0);
	cal->H_px_to_m[0] = cal->H_px_to_m[4] = cal->H_px_to_m[8] = 1;
	cal->rms_px = cal->rms_mm = NAN;
}

void wl_calib_release(wl_calib *cal)
{
	if (cal)
		cal->n_outline = cal->n_points = 0;
}

double wl_calib_camera_height_m(const wl_calib *cal)
{
	double C[3];
	wl_camera_position(&cal->cam, C);
	return C[2];
}

double wl_calib_camera_tilt_deg(const wl_calib *cal)
{
	/* optical axis in the world is the third row of R; nadir is -z */
	double c = -cal->cam.R[8];
	if (c > 1)
		c = 1;
	if (c < -1)
		c = -1;
	return acos(c) / WL_DEG;
}

int wl_calib_pixel_to_plane(const wl_calib *cal, double u, double v, double z_m, double *x_m, double *y_m)
{
	if (cal->cam.water_depth_m > 0)
		return wl_camera_pixel_to_plane_water(&cal->cam, u, v, z_m, x_m, y_m);
	return wl_camera_pixel_to_plane(&cal->cam, u, v, z_m, x_m, y_m);
}

wl_status wl_calib_check_clip(const wl_calib *cal, const char *cal_path, int width_px, int height_px,
                              int displayed, wl_err *err)
{
	const char *want = cal->displayed ? "displayed" : "coded", *have = displayed ? "displayed" : "coded";
	if (cal->cam.width_px != width_px || cal->cam.height_px != height_px || cal->displayed != displayed)
		return wl_err_set(
		        err, WL_ECALIB,
		        "%s: calibrated for %dx%d %s pixels but the clip gives %dx%d %s pixels: "
		        "calibrate this camera setting (wakeline calibrate) or use the matching clip",
		        cal_path, cal->cam.width_px, cal->cam.height_px, want, width_px, height_px, have);
	return WL_OK;
}

/* ---- saving ---- */

static cJSON *add_mat3(cJSON *obj, const char *key, const double m[9])
{
	cJSON *a = cJSON_AddArrayToObject(obj, key);
	for (int r = 0; a && r < 3; r++) {
		cJSON *row = cJSON_CreateDoubleArray(m + 3 * r, 3);
		if (!row)
			return NULL;
		cJSON_AddItemToArray(a, row);
	}
	return a;
}

static void utc_now(char buf[32])
{
	time_t now = time(NULL);
	struct tm tm;
	if (gmtime_r(&now, &tm))
		strftime(buf, 32, "%Y-%m-%dT%H:%M:%SZ", &tm);
	else
		snprintf(buf, 32, "unknown");
}

/* The outline of a calibration in the shared type. */
static void get_outline(const wl_calib *cal, wl_cal_outline *o)
{
	o->n = cal->n_outline;
	memcpy(o->xy, cal->outline_m, sizeof o->xy);
}

static cJSON *build_json(const wl_calib *cal)
{
	cJSON *root = wl_cal_new_root(), *o;
	const wl_camera *c = &cal->cam;
	double pos[3], rvec[3], size[2] = {c->width_px, c->height_px};
	char when[32];
	wl_cal_outline outline;
	if (!root)
		return NULL;
	wl_camera_position(c, pos);
	wl_rodrigues_inv(c->R, rvec);
	wl_json_add_numbers(root, "image_size_px", size, 2);
	cJSON_AddStringToObject(root, "pixels", cal->displayed ? "displayed" : "coded");
	cJSON_AddNumberToObject(root, "rotation_deg", cal->rotation_deg);
	add_mat3(root, "homography_px_to_m", cal->H_px_to_m);
	add_mat3(root, "camera_matrix", c->K);
	wl_json_add_numbers(root, "distortion", c->dist, 5);
	cJSON_AddStringToObject(root, "intrinsics_source", cal->intrinsics_source);
	wl_json_add_numbers(root, "camera_position_m", pos, 3);
	add_mat3(root, "camera_rotation", c->R);
	wl_json_add_numbers(root, "camera_rvec_rad", rvec, 3);
	wl_json_add_numbers(root, "camera_translation_m", c->t, 3);
	cJSON_AddNumberToObject(root, "camera_height_m", pos[2]);
	cJSON_AddNumberToObject(root, "camera_tilt_deg", wl_calib_camera_tilt_deg(cal));
	cJSON_AddNumberToObject(root, "plane_height_m", cal->plane_height_m);
	o = cJSON_AddObjectToObject(root, "water");
	if (o) {
		cJSON_AddNumberToObject(o, "depth_m", c->water_depth_m);
		cJSON_AddNumberToObject(o, "index", c->water_index);
		cJSON_AddStringToObject(o, "model",
		                        c->water_depth_m > 0 ? "flat surface, Snell's law" : "none");
	}
	if (isfinite(cal->rms_px))
		cJSON_AddNumberToObject(root, "rms_px", cal->rms_px);
	else
		cJSON_AddNullToObject(root, "rms_px");
	if (isfinite(cal->rms_mm))
		cJSON_AddNumberToObject(root, "rms_mm", cal->rms_mm);
	else
		cJSON_AddNullToObject(root, "rms_mm");
	get_outline(cal, &outline);
	if (!wl_cal_add_outline(root, &outline) || !wl_cal_add_points(root, cal->points, cal->n_points))
		goto fail;
	o = cJSON_AddObjectToObject(root, "provenance");
	if (!o)
		goto fail;
	cJSON_AddStringToObject(o, "tool", "wakeline");
	cJSON_AddStringToObject(o, "version", WL_VERSION);
	cJSON_AddStringToObject(o, "revision", WL_VERSION_GIT);
	cJSON_AddStringToObject(o, "source", cal->source);
	if (cal->created_utc[0])
		snprintf(when, sizeof when, "%s", cal->created_utc);
	else
		utc_now(when);
	cJSON_AddStringToObject(o, "created_utc", when);
	return root;
fail:
	cJSON_Delete(root);
	return NULL;
}

wl_status wl_calib_save(const char *path, const wl_calib *cal, wl_err *err)
{
	cJSON *root = build_json(cal);
	wl_status st;
	if (!root)
		return wl_err_set(err, WL_ENOMEM, "out of memory building '%s'", path);
	st = wl_json_save(path, root, err);
	cJSON_Delete(root);
	return st;
}

/* ---- loading ---- */

/* A 3×3 matrix as three rows of three numbers (or nine numbers). */
static wl_status get_mat3(const cJSON *obj, const char *key, const char *name, double m[9], wl_err *err)
{
	const cJSON *a = cJSON_GetObjectItemCaseSensitive(obj, key), *row;
	int r = 0;
	if (!a)
		return wl_err_set(err, WL_EFORMAT, "%s: key '%s' is missing", name, key);
	if (cJSON_IsArray(a) && cJSON_GetArraySize(a) == 9)
		return wl_json_numbers(obj, key, name, m, 9, err);
	if (!cJSON_IsArray(a) || cJSON_GetArraySize(a) != 3)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: key '%s' must be a 3x3 matrix (three rows of three numbers)", name,
		                  key);
	cJSON_ArrayForEach(row, a)
	{
		int c = 0;
		const cJSON *v;
		if (!cJSON_IsArray(row) || cJSON_GetArraySize(row) != 3)
			return wl_err_set(err, WL_EFORMAT, "%s: key '%s': row %d must hold three numbers",
			                  name, key, r);
		cJSON_ArrayForEach(v, row)
		{
			if (!cJSON_IsNumber(v) || !isfinite(v->valuedouble))
				return wl_err_set(err, WL_EFORMAT,
				                  "%s: key '%s': row %d, column %d is not a number", name,
				                  key, r, c);
			m[3 * r + c++] = v->valuedouble;
		}
		r++;
	}
	return WL_OK;
}

static wl_status copy_string(const cJSON *obj, const char *key, const char *name, char *dst, size_t cap,
                             int required, wl_err *err)
{
	const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
	if (!v && !required)
		return WL_OK;
	if (!cJSON_IsString(v))
		return wl_err_set(err, WL_EFORMAT, "%s: key '%s' %s", name, key,
		                  v ? "must be a string" : "is missing");
	snprintf(dst, cap, "%s", v->valuestring);
	return WL_OK;
}

static wl_status check_model(const wl_calib *cal, const double pos[3], const char *name, wl_err *err)
{
	const wl_camera *c = &cal->cam;
	double RRt[9], Rt[9], C[3], dev = 0;
	if (!(c->K[0] > 0) || !(c->K[4] > 0) || c->K[3] != 0 || c->K[6] != 0 || c->K[7] != 0 || c->K[8] != 1)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: key 'camera_matrix' must be [[fx, s, cx], [0, fy, cy], [0, 0, 1]] "
		                  "with fx, fy > 0",
		                  name);
	wl_mat_transpose(c->R, Rt, 3, 3);
	wl_mul3(c->R, Rt, RRt);
	for (int i = 0; i < 9; i++)
		dev = fmax(dev, fabs(RRt[i] - (i % 4 == 0)));
	if (dev > 1e-6 || wl_det3(c->R) < 0)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: key 'camera_rotation' is not a rotation matrix: recalibrate", name);
	wl_camera_position(c, C);
	if (fabs(C[0] - pos[0]) + fabs(C[1] - pos[1]) + fabs(C[2] - pos[2]) > 1e-3)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: key 'camera_position_m' disagrees with 'camera_rotation' and "
		                  "'camera_translation_m': the file was edited by hand; recalibrate",
		                  name);
	if (!(C[2] > 0))
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: key 'camera_position_m': the camera is not above the floor", name);
	if (fabs(wl_det3(cal->H_px_to_m)) < 1e-300)
		return wl_err_set(err, WL_EFORMAT, "%s: key 'homography_px_to_m' is singular", name);
	if (c->water_depth_m < 0 || (c->water_depth_m > 0 && !(c->water_index >= 1 && c->water_index < 3)))
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: key 'water': depth_m must be >= 0 and index in [1, 3)", name);
	if (c->water_depth_m >= C[2])
		return wl_err_set(err, WL_EFORMAT, "%s: key 'water': depth_m is above the camera", name);
	return WL_OK;
}

/* The outline and the points: the parts of CAL.json other stages share. */
static wl_status load_shared(const wl_cal_doc *d, wl_calib *cal, wl_err *err)
{
	wl_cal_outline o;
	wl_status st;
	if ((st = wl_cal_get_outline(d, &o, err)) ||
	    (st = wl_cal_get_points(d, cal->points, WL_CALIB_MAX_POINTS, &cal->n_points, err)))
		return st;
	cal->n_outline = o.n;
	memcpy(cal->outline_m, o.xy, sizeof cal->outline_m);
	return WL_OK;
}

static wl_status parse(const wl_cal_doc *d, wl_calib *cal, wl_err *err)
{
	const cJSON *root = d->root;
	const char *name = d->path;
	double size[2], pos[3], v;
	const char *pix = NULL;
	const cJSON *water, *prov;
	wl_status st;
	if ((st = wl_json_numbers(root, "image_size_px", name, size, 2, err)))
		return st;
	if (!(size[0] >= 1 && size[1] >= 1 && size[0] == floor(size[0]) && size[1] == floor(size[1]) &&
	      size[0] < 1e6 && size[1] < 1e6))
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: key 'image_size_px' must be two positive whole numbers", name);
	cal->cam.width_px = (int)size[0];
	cal->cam.height_px = (int)size[1];
	if ((st = wl_json_string(root, "pixels", name, &pix, err)))
		return st;
	if (strcmp(pix, "coded") && strcmp(pix, "displayed"))
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: key 'pixels' must be \"coded\" or \"displayed\", not '%s'", name, pix);
	cal->displayed = strcmp(pix, "displayed") == 0;
	v = wl_json_number_or(root, "rotation_deg", 0);
	cal->rotation_deg = (int)v;
	if (v != 0 && v != 90 && v != 180 && v != 270)
		return wl_err_set(err, WL_EFORMAT, "%s: key 'rotation_deg' must be 0, 90, 180 or 270", name);
	if ((st = get_mat3(root, "homography_px_to_m", name, cal->H_px_to_m, err)) ||
	    (st = get_mat3(root, "camera_matrix", name, cal->cam.K, err)) ||
	    (st = wl_json_numbers(root, "distortion", name, cal->cam.dist, 5, err)) ||
	    (st = get_mat3(root, "camera_rotation", name, cal->cam.R, err)) ||
	    (st = wl_json_numbers(root, "camera_translation_m", name, cal->cam.t, 3, err)) ||
	    (st = wl_json_numbers(root, "camera_position_m", name, pos, 3, err)) ||
	    (st = wl_json_number(root, "plane_height_m", name, &cal->plane_height_m, err)))
		return st;
	water = cJSON_GetObjectItemCaseSensitive(root, "water");
	if (!cJSON_IsObject(water))
		return wl_err_set(err, WL_EFORMAT, "%s: key 'water' %s", name,
		                  water ? "must be an object {depth_m, index}" : "is missing");
	cal->cam.water_depth_m = wl_json_number_or(water, "depth_m", NAN);
	if (!isfinite(cal->cam.water_depth_m))
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: key 'water.depth_m' is missing or not a number (0: no water)", name);
	cal->cam.water_index = wl_json_number_or(water, "index", WL_WATER_INDEX);
	cal->rms_px = wl_json_number_or(root, "rms_px", NAN);
	cal->rms_mm = wl_json_number_or(root, "rms_mm", NAN);
	if ((st = copy_string(root, "intrinsics_source", name, cal->intrinsics_source,
	                      sizeof cal->intrinsics_source, 1, err)) ||
	    (st = load_shared(d, cal, err)))
		return st;
	prov = cJSON_GetObjectItemCaseSensitive(root, "provenance");
	if (cJSON_IsObject(prov)) {
		snprintf(cal->source, sizeof cal->source, "%s", wl_json_string_or(prov, "source", ""));
		snprintf(cal->created_utc, sizeof cal->created_utc, "%s",
		         wl_json_string_or(prov, "created_utc", ""));
		snprintf(cal->tool_version, sizeof cal->tool_version, "%s",
		         wl_json_string_or(prov, "version", ""));
	}
	return check_model(cal, pos, name, err);
}

wl_status wl_calib_load(const char *path, wl_calib *cal, wl_err *err)
{
	wl_cal_doc d;
	wl_status st;
	wl_calib_init(cal);
	if ((st = wl_cal_doc_read(path, &d, err)))
		return st;
	st = parse(&d, cal, err);
	if (!st)
		snprintf(cal->sha256_hex, sizeof cal->sha256_hex, "%s", d.sha256_hex);
	wl_cal_doc_release(&d);
	if (st)
		wl_calib_init(cal);
	return st;
}
