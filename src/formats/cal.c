/*
 * cal.c: CAL.json's shared parts (see cal.h): the format check, the tank
 * outline and the calibration points.
 */
#define _POSIX_C_SOURCE 200809L
#include "formats/cal.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/afile.h"
#include "core/jsonio.h"
#include "core/sha256.h"
#include "formats/format.h"

static const wl_format CAL = {"CAL.json", "wakeline-calibration", WL_CAL_FORMAT_VERSION,
                              "wakeline calibrate"};

static const char *const K_OUTLINE = "tank_outline_m";
static const char *const K_POINTS = "points";
/* the keys of one point */
static const char *const K_ID = "id", *const K_U = "u_px", *const K_V = "v_px", *const K_X = "x_m",
                         *const K_Y = "y_m", *const K_Z = "z_m", *const K_RPX = "residual_px",
                         *const K_RMM = "residual_mm", *const K_USED = "used";

wl_status wl_cal_doc_parse(const char *name, const char *text, size_t len, wl_cal_doc *d, wl_err *err)
{
	wl_sha256 h;
	wl_status st;
	memset(d, 0, sizeof *d);
	if (!(d->path = strdup(name)))
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", name);
	wl_sha256_init(&h);
	wl_sha256_update(&h, text, len);
	wl_sha256_final(&h, d->sha256_hex);
	d->bytes = len;
	if ((st = wl_json_parse(name, text, len, &d->root, err)) ||
	    (st = wl_format_check_json(&CAL, d->root, name, err)))
		wl_cal_doc_release(d);
	return st;
}

wl_status wl_cal_doc_read(const char *path, wl_cal_doc *d, wl_err *err)
{
	char *text = NULL;
	size_t len = 0;
	wl_status st;
	memset(d, 0, sizeof *d);
	if ((st = wl_read_file(path, WL_JSON_MAX_BYTES, &text, &len, err)))
		return st;
	st = wl_cal_doc_parse(path, text, len, d, err);
	free(text);
	return st;
}

void wl_cal_doc_release(wl_cal_doc *d)
{
	if (!d)
		return;
	cJSON_Delete(d->root);
	free(d->path);
	memset(d, 0, sizeof *d);
}

wl_status wl_cal_get_outline(const wl_cal_doc *d, wl_cal_outline *out, wl_err *err)
{
	const cJSON *a = cJSON_GetObjectItemCaseSensitive(d->root, K_OUTLINE), *pt;
	int n = 0;
	out->n = 0;
	if (!a)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: key '%s' is missing: give [] for no outline, or recalibrate", d->path,
		                  K_OUTLINE);
	if (cJSON_IsArray(a) && cJSON_GetArraySize(a) == 0)
		return WL_OK;
	if (!cJSON_IsArray(a) || cJSON_GetArraySize(a) < 3 || cJSON_GetArraySize(a) > WL_CAL_MAX_OUTLINE)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: key '%s' must be an array of 3 to %d [x, y] pairs in metres (or empty "
		                  "for none)",
		                  d->path, K_OUTLINE, WL_CAL_MAX_OUTLINE);
	cJSON_ArrayForEach(pt, a)
	{
		const cJSON *x = cJSON_GetArrayItem(pt, 0), *y = cJSON_GetArrayItem(pt, 1);
		if (!cJSON_IsArray(pt) || cJSON_GetArraySize(pt) != 2 || !cJSON_IsNumber(x) ||
		    !cJSON_IsNumber(y) || !isfinite(x->valuedouble) || !isfinite(y->valuedouble))
			return wl_err_set(err, WL_EFORMAT,
			                  "%s: key '%s': item %d is not an [x, y] pair of numbers", d->path,
			                  K_OUTLINE, n);
		out->xy[n][0] = x->valuedouble;
		out->xy[n][1] = y->valuedouble;
		n++;
	}
	out->n = n;
	return WL_OK;
}

wl_status wl_cal_get_points(const wl_cal_doc *d, wl_calib_point *pts, int max, int *n, wl_err *err)
{
	const cJSON *a = cJSON_GetObjectItemCaseSensitive(d->root, K_POINTS), *o;
	int i = 0;
	*n = 0;
	if (!a)
		return WL_OK;
	if (!cJSON_IsArray(a))
		return wl_err_set(err, WL_EFORMAT, "%s: key '%s' must be an array", d->path, K_POINTS);
	cJSON_ArrayForEach(o, a)
	{
		wl_calib_point *p;
		if (i >= max)
			return wl_err_set(err, WL_ELIMIT, "%s: key '%s': more than %d points", d->path,
			                  K_POINTS, max);
		if (!cJSON_IsObject(o))
			return wl_err_set(err, WL_EFORMAT, "%s: key '%s[%d]' must be an object", d->path,
			                  K_POINTS, i);
		p = &pts[i];
		memset(p, 0, sizeof *p);
		snprintf(p->id, sizeof p->id, "%s", wl_json_string_or(o, K_ID, ""));
		p->u_px = wl_json_number_or(o, K_U, NAN);
		p->v_px = wl_json_number_or(o, K_V, NAN);
		p->x_m = wl_json_number_or(o, K_X, NAN);
		p->y_m = wl_json_number_or(o, K_Y, NAN);
		p->z_m = wl_json_number_or(o, K_Z, 0);
		p->residual_px = wl_json_number_or(o, K_RPX, NAN);
		p->residual_mm = wl_json_number_or(o, K_RMM, NAN);
		p->used = !cJSON_IsFalse(cJSON_GetObjectItemCaseSensitive(o, K_USED));
		if (!isfinite(p->u_px) || !isfinite(p->v_px) || !isfinite(p->x_m) || !isfinite(p->y_m))
			return wl_err_set(err, WL_EFORMAT,
			                  "%s: key '%s[%d]': %s, %s, %s and %s must be numbers", d->path,
			                  K_POINTS, i, K_U, K_V, K_X, K_Y);
		i++;
	}
	*n = i;
	return WL_OK;
}

int wl_cal_point_is_centre(const wl_calib_point *p)
{
	return strchr(p->id, '.') == NULL;
}

cJSON *wl_cal_new_root(void)
{
	cJSON *root = cJSON_CreateObject();
	if (root)
		wl_format_add_json(&CAL, root);
	return root;
}

int wl_cal_add_outline(cJSON *root, const wl_cal_outline *o)
{
	cJSON *a = cJSON_AddArrayToObject(root, K_OUTLINE);
	for (int i = 0; a && i < o->n; i++) {
		cJSON *pt = cJSON_CreateDoubleArray(o->xy[i], 2);
		if (!pt)
			return 0;
		cJSON_AddItemToArray(a, pt);
	}
	return a != NULL;
}

int wl_cal_add_points(cJSON *root, const wl_calib_point *pts, int n)
{
	cJSON *a = cJSON_AddArrayToObject(root, K_POINTS);
	if (!a)
		return 0;
	for (int i = 0; i < n; i++) {
		const wl_calib_point *p = &pts[i];
		cJSON *o = cJSON_CreateObject();
		if (!o)
			return 0;
		cJSON_AddItemToArray(a, o);
		cJSON_AddStringToObject(o, K_ID, p->id);
		cJSON_AddNumberToObject(o, K_U, p->u_px);
		cJSON_AddNumberToObject(o, K_V, p->v_px);
		cJSON_AddNumberToObject(o, K_X, p->x_m);
		cJSON_AddNumberToObject(o, K_Y, p->y_m);
		cJSON_AddNumberToObject(o, K_Z, p->z_m);
		if (isfinite(p->residual_px))
			cJSON_AddNumberToObject(o, K_RPX, p->residual_px);
		if (isfinite(p->residual_mm))
			cJSON_AddNumberToObject(o, K_RMM, p->residual_mm);
		cJSON_AddBoolToObject(o, K_USED, p->used);
	}
	return 1;
}
