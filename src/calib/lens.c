/*
 * lens.c: lens intrinsics from chessboard views (see lens.h).  Detection
 * and calibrateCamera are OpenCV's (src/cv/); this file chooses the views
 * and reads and writes LENS.json.
 */
#include "calib/lens.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/jsonio.h"
#include "cv/cv.h"
#include "wl_version.h"

#define ALIKE_FRACTION 0.01 /* mean corner shift below 1% of the diagonal: the same view (our choice) */
#define BLUR_FRACTION 0.25  /* sharpness below 1/4 of the median: blurred (our choice) */

struct wl_lens_collector {
	int cols, rows, half_win, width_px, height_px, n_views;
	double square_mm;
	int no_board, alike;
	double *corners; /* WL_LENS_MAX_VIEWS × cols·rows × 2 */
	double sharp[WL_LENS_MAX_VIEWS];
};

wl_status wl_lens_collector_create(int cols, int rows, double square_mm, int half_win,
                                   wl_lens_collector **out, wl_err *err)
{
	wl_lens_collector *lc;
	*out = NULL;
	if (cols < 3 || rows < 3 || cols > 64 || rows > 64 || !(square_mm > 0) || half_win < 1 ||
	    half_win > 50)
		return wl_err_set(
		        err, WL_EINVAL,
		        "board %dx%d, square %g mm, window %d: need 3 to 64 inner corners each way, a "
		        "positive square size and a window of 1 to 50",
		        cols, rows, square_mm, half_win);
	lc = calloc(1, sizeof *lc);
	if (lc)
		lc->corners = malloc(sizeof(double) * 2 * (size_t)(cols * rows) * WL_LENS_MAX_VIEWS);
	if (!lc || !lc->corners) {
		wl_lens_collector_destroy(lc);
		return wl_err_set(err, WL_ENOMEM, "out of memory for the lens views");
	}
	lc->cols = cols;
	lc->rows = rows;
	lc->square_mm = square_mm;
	lc->half_win = half_win;
	*out = lc;
	return WL_OK;
}

void wl_lens_collector_destroy(wl_lens_collector *lc)
{
	if (!lc)
		return;
	free(lc->corners);
	free(lc);
}

static int too_alike(const wl_lens_collector *lc, const double *c)
{
	int n = lc->cols * lc->rows;
	double diag = hypot(lc->width_px, lc->height_px);
	for (int v = 0; v < lc->n_views; v++) {
		const double *k = lc->corners + 2 * (size_t)n * (size_t)v;
		double s = 0;
		for (int i = 0; i < n; i++)
			s += hypot(c[2 * i] - k[2 * i], c[2 * i + 1] - k[2 * i + 1]);
		if (s / n < ALIKE_FRACTION * diag)
			return 1;
	}
	return 0;
}

wl_status wl_lens_collector_add(wl_lens_collector *lc, const uint8_t *gray, int width_px, int height_px,
                                int stride, int *kept, wl_err *err)
{
	int n = lc->cols * lc->rows, found = 0;
	double *slot;
	wl_status st;
	*kept = 0;
	if (lc->width_px == 0) {
		lc->width_px = width_px;
		lc->height_px = height_px;
	} else if (width_px != lc->width_px || height_px != lc->height_px) {
		return wl_err_set(err, WL_EINVAL,
		                  "frame of %dx%d among frames of %dx%d: use one camera setting", width_px,
		                  height_px, lc->width_px, lc->height_px);
	}
	if (lc->n_views >= WL_LENS_MAX_VIEWS) {
		lc->alike++;
		return WL_OK;
	}
	slot = lc->corners + 2 * (size_t)n * (size_t)lc->n_views;
	if ((st = wl_cv_find_chessboard(gray, width_px, height_px, stride, lc->cols, lc->rows, lc->half_win,
	                                slot, &found, err)))
		return st;
	if (!found) {
		lc->no_board++;
		return WL_OK;
	}
	if (too_alike(lc, slot)) {
		lc->alike++;
		return WL_OK;
	}
	if ((st = wl_cv_sharpness(gray, width_px, height_px, stride, &lc->sharp[lc->n_views], err)))
		return st;
	lc->n_views++;
	*kept = 1;
	return WL_OK;
}

static int cmp_double(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return (x > y) - (x < y);
}

static double coverage(const wl_lens_collector *lc)
{
	int cells[100] = {0}, n = lc->cols * lc->rows, hit = 0;
	for (int v = 0; v < lc->n_views; v++)
		for (int i = 0; i < n; i++) {
			const double *c = lc->corners + 2 * ((size_t)n * (size_t)v + (size_t)i);
			int cx = (int)(10 * c[0] / lc->width_px), cy = (int)(10 * c[1] / lc->height_px);
			if (cx >= 0 && cx < 10 && cy >= 0 && cy < 10)
				cells[10 * cy + cx] = 1;
		}
	for (int i = 0; i < 100; i++)
		hit += cells[i];
	return hit / 100.0;
}

static const struct {
	const char *name;
	int flags;  /* wl_cv_flags */
	int parent; /* the model this one extends by one step (-1: the first) */
} lens_models[] = {
        {"k1", WL_CV_FIX_K2 | WL_CV_FIX_K3 | WL_CV_ZERO_TANGENT, -1},
        {"k1k2", WL_CV_FIX_K3 | WL_CV_ZERO_TANGENT, 0},
        {"k1k2k3", WL_CV_ZERO_TANGENT, 1},
        {"k1k2p1p2", WL_CV_FIX_K3, 1},
        {"k1k2p1p2k3", 0, 3},
};
#define MODEL_GAIN 0.03 /* as calibrate's (solve.c), our choice */

/* Calibrates with each model and keeps the one the left-out views prefer,
 * one step at a time along the chain (as calibrate's, solve.c): of the
 * models that extend the one chosen so far, the best predictor is taken
 * when it predicts the left-out views MODEL_GAIN better. */
static wl_status choose_model(const wl_lens_collector *lc, const double *obj, int n, int k, wl_lens *lens,
                              double K[9], double dist[5], double *rms, wl_err *err)
{
	double Ks[WL_LENS_MAX_MODELS][9], Ds[WL_LENS_MAX_MODELS][5];
	int best = 1;
	wl_status st;
	for (int m = 0; m < WL_LENS_MAX_MODELS; m++) {
		wl_lens_model *lm = &lens->models[m];
		int flags = wl_cv_flags(lens_models[m].flags);
		snprintf(lm->name, sizeof lm->name, "%s", lens_models[m].name);
		if ((st = wl_cv_calibrate(obj, n, lc->corners, k, lc->width_px, lc->height_px, flags, Ks[m],
		                          Ds[m], &lm->rms_px, NULL, err)))
			return st;
		lm->fx = Ks[m][0];
		lm->fy = Ks[m][4];
		lm->holdout_px = INFINITY;
		if (k >= 5 && (st = wl_cv_holdout_rms(obj, n, lc->corners, k, lc->width_px, lc->height_px,
		                                      flags, &lm->holdout_px, err)))
			return st;
		lens->n_models = m + 1;
	}
	if (k >= 5) {
		best = 0;
		for (;;) {
			int next = -1;
			for (int m = 1; m < WL_LENS_MAX_MODELS; m++)
				if (lens_models[m].parent == best &&
				    (next < 0 || lens->models[m].holdout_px < lens->models[next].holdout_px))
					next = m;
			if (next < 0 || !(lens->models[next].holdout_px <
			                  (1 - MODEL_GAIN) * lens->models[best].holdout_px))
				break;
			best = next;
		}
	}
	snprintf(lens->model, sizeof lens->model, "%s", lens_models[best].name);
	memcpy(K, Ks[best], sizeof Ks[best]);
	memcpy(dist, Ds[best], sizeof Ds[best]);
	*rms = lens->models[best].rms_px;
	return WL_OK;
}

wl_status wl_lens_collector_finish(wl_lens_collector *lc, wl_lens *lens, wl_err *err)
{
	int n = lc->cols * lc->rows, k = 0, blurred = 0;
	double sorted[WL_LENS_MAX_VIEWS], median, K[9], dist[5], rms, *obj = NULL;
	wl_status st;
	memset(lens, 0, sizeof *lens);
	if (lc->n_views > 0) {
		memcpy(sorted, lc->sharp, sizeof(double) * (size_t)lc->n_views);
		qsort(sorted, (size_t)lc->n_views, sizeof(double), cmp_double);
		median = sorted[lc->n_views / 2];
		for (int v = 0; v < lc->n_views; v++) {
			if (lc->sharp[v] < BLUR_FRACTION * median) {
				blurred++;
				continue;
			}
			if (k != v) {
				memmove(lc->corners + 2 * (size_t)n * (size_t)k,
				        lc->corners + 2 * (size_t)n * (size_t)v,
				        sizeof(double) * 2 * (size_t)n);
				lc->sharp[k] = lc->sharp[v];
			}
			k++;
		}
		lc->n_views = k;
	}
	lens->views_used = k;
	lens->views_no_board = lc->no_board;
	lens->views_alike = lc->alike;
	lens->views_blurred = blurred;
	lens->board_cols = lc->cols;
	lens->board_rows = lc->rows;
	lens->square_mm = lc->square_mm;
	if (k < 3)
		return wl_err_set(
		        err, WL_ECALIB,
		        "%d usable view%s of the %dx%d board (%d without the board, %d too alike, %d "
		        "blurred): at least 3 are needed, 10-20 from different angles are better",
		        k, k == 1 ? "" : "s", lc->cols, lc->rows, lc->no_board, lc->alike, blurred);
	obj = malloc(sizeof(double) * 3 * (size_t)n);
	if (!obj)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the board");
	for (int r = 0; r < lc->rows; r++)
		for (int c = 0; c < lc->cols; c++) {
			double *o = obj + 3 * (r * lc->cols + c);
			o[0] = c * lc->square_mm / 1000;
			o[1] = r * lc->square_mm / 1000;
			o[2] = 0;
		}
	st = choose_model(lc, obj, n, k, lens, K, dist, &rms, err);
	free(obj);
	if (st)
		return st;
	wl_camera_init(&lens->cam, lc->width_px, lc->height_px, K[0], K[4], K[2], K[5]);
	lens->cam.K[1] = K[1];
	memcpy(lens->cam.dist, dist, sizeof dist);
	lens->rms_px = rms;
	lens->coverage = coverage(lc);
	return WL_OK;
}

static cJSON *mat3(const double m[9])
{
	cJSON *a = cJSON_CreateArray();
	for (int r = 0; a && r < 3; r++)
		cJSON_AddItemToArray(a, cJSON_CreateDoubleArray(m + 3 * r, 3));
	return a;
}

wl_status wl_lens_save(const char *path, const wl_lens *lens, wl_err *err)
{
	cJSON *root = cJSON_CreateObject(), *o;
	double size[2] = {lens->cam.width_px, lens->cam.height_px};
	wl_status st;
	if (!root)
		return wl_err_set(err, WL_ENOMEM, "out of memory building '%s'", path);
	cJSON_AddStringToObject(root, "format", "wakeline-lens");
	cJSON_AddNumberToObject(root, "format_version", 1);
	wl_json_add_numbers(root, "image_size_px", size, 2);
	cJSON_AddItemToObject(root, "camera_matrix", mat3(lens->cam.K));
	wl_json_add_numbers(root, "distortion", lens->cam.dist, 5);
	cJSON_AddNumberToObject(root, "rms_px", lens->rms_px);
	if (lens->model[0]) {
		cJSON *a = cJSON_AddArrayToObject(root, "distortion_models");
		cJSON_AddStringToObject(root, "distortion_model", lens->model);
		for (int m = 0; a && m < lens->n_models; m++) {
			cJSON *e = cJSON_CreateObject();
			cJSON_AddItemToArray(a, e);
			cJSON_AddStringToObject(e, "model", lens->models[m].name);
			cJSON_AddNumberToObject(e, "rms_px", lens->models[m].rms_px);
			if (isfinite(lens->models[m].holdout_px))
				cJSON_AddNumberToObject(e, "holdout_rms_px", lens->models[m].holdout_px);
			else
				cJSON_AddNullToObject(e, "holdout_rms_px");
			cJSON_AddNumberToObject(e, "fx_px", lens->models[m].fx);
		}
	}
	o = cJSON_AddObjectToObject(root, "board");
	if (o) {
		cJSON_AddNumberToObject(o, "cols", lens->board_cols);
		cJSON_AddNumberToObject(o, "rows", lens->board_rows);
		cJSON_AddNumberToObject(o, "square_mm", lens->square_mm);
	}
	o = cJSON_AddObjectToObject(root, "views");
	if (o) {
		cJSON_AddNumberToObject(o, "used", lens->views_used);
		cJSON_AddNumberToObject(o, "no_board", lens->views_no_board);
		cJSON_AddNumberToObject(o, "too_alike", lens->views_alike);
		cJSON_AddNumberToObject(o, "blurred", lens->views_blurred);
		cJSON_AddNumberToObject(o, "coverage", lens->coverage);
	}
	o = cJSON_AddObjectToObject(root, "provenance");
	if (o) {
		cJSON_AddStringToObject(o, "tool", "wakeline");
		cJSON_AddStringToObject(o, "version", WL_VERSION);
		cJSON_AddStringToObject(o, "source", lens->source);
		cJSON_AddStringToObject(o, "method",
		                        "OpenCV calibrateCamera (Zhang 2000), distortion model chosen by "
		                        "leave-one-view-out residual");
	}
	st = wl_json_save(path, root, err);
	cJSON_Delete(root);
	return st;
}

wl_status wl_lens_load(const char *path, wl_lens *lens, wl_err *err)
{
	cJSON *root = NULL;
	const cJSON *K;
	double size[2], m[9];
	wl_status st;
	memset(lens, 0, sizeof *lens);
	if ((st = wl_json_load(path, &root, err)))
		return st;
	K = cJSON_GetObjectItemCaseSensitive(root, "camera_matrix");
	if ((st = wl_json_numbers(root, "image_size_px", path, size, 2, err)))
		goto out;
	if (!(size[0] >= 1 && size[1] >= 1 && size[0] < 1e6 && size[1] < 1e6)) {
		st = wl_err_set(err, WL_EFORMAT, "%s: key 'image_size_px' must be two positive whole numbers",
		                path);
		goto out;
	}
	if (!cJSON_IsArray(K) || cJSON_GetArraySize(K) != 3) {
		st = wl_err_set(err, WL_EFORMAT, "%s: key 'camera_matrix' %s", path,
		                K ? "must be three rows of three numbers" : "is missing");
		goto out;
	}
	for (int r = 0; r < 3; r++) {
		const cJSON *row = cJSON_GetArrayItem(K, r);
		for (int c = 0; c < 3; c++) {
			const cJSON *v = cJSON_GetArrayItem(row, c);
			if (!cJSON_IsArray(row) || cJSON_GetArraySize(row) != 3 || !cJSON_IsNumber(v) ||
			    !isfinite(v->valuedouble)) {
				st = wl_err_set(err, WL_EFORMAT,
				                "%s: key 'camera_matrix': row %d must hold three numbers",
				                path, r);
				goto out;
			}
			m[3 * r + c] = v->valuedouble;
		}
	}
	if (!(m[0] > 0) || !(m[4] > 0) || m[3] != 0 || m[6] != 0 || m[7] != 0 || m[8] != 1) {
		st = wl_err_set(err, WL_EFORMAT,
		                "%s: key 'camera_matrix' must be [[fx, s, cx], [0, fy, cy], [0, 0, 1]]",
		                path);
		goto out;
	}
	wl_camera_init(&lens->cam, (int)size[0], (int)size[1], m[0], m[4], m[2], m[5]);
	lens->cam.K[1] = m[1];
	if ((st = wl_json_numbers(root, "distortion", path, lens->cam.dist, 5, err)))
		goto out;
	lens->rms_px = wl_json_number_or(root, "rms_px", NAN);
	snprintf(lens->source, sizeof lens->source, "%s", path);
	st = WL_OK;
out:
	cJSON_Delete(root);
	return st;
}
