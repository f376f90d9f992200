/* rawside.c: the RAW sidecar raw.json (rawside.h). */
#include "formats/rawside.h"

#include <cjson/cJSON.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/afile.h"
#include "core/jsonio.h"
#include "formats/format.h"

static const char *const K_FORMAT = "format", *const K_VERSION = "format_version",
                         *const FORMAT_NAME = "wakeline raw sidecar", *const K_WATCH = "camera_watch",
                         *const K_ENABLED = "enabled", *const K_PERIOD = "period_s",
                         *const K_THRESHOLD = "threshold_px", *const K_MIN_MARKERS = "min_markers",
                         *const K_MARKERS = "markers", *const K_IN_VIEW = "markers_in_view",
                         *const K_CHECKS = "checks", *const K_TAG_CHECKS = "tag_checks",
                         *const K_MOVES = "camera_moves", *const K_T = "t_s", *const K_FRAME = "frame",
                         *const K_LAST_STILL = "last_still_t_s", *const K_SHIFT = "shift_px",
                         *const K_REREG = "reregistered", *const K_RMS = "rms_px", *const K_TURN = "turn_deg",
                         *const K_CENTRE = "centre_shift_mm", *const K_SUSPECT = "suspect",
                         *const K_FROM = "from_t_s", *const K_TO = "to_t_s";

void wl_rawside_init(wl_rawside *s)
{
	memset(s, 0, sizeof *s);
	s->period_s = s->threshold_px = NAN;
	s->suspect_from_t_s = s->suspect_to_t_s = NAN;
}

int wl_rawside_path(const char *raw_csv_path, char *buf, size_t cap)
{
	return wl_format_sidecar_path(raw_csv_path, buf, cap);
}

static void add_num_or_null(cJSON *o, const char *key, double v)
{
	if (isfinite(v))
		cJSON_AddNumberToObject(o, key, v);
	else
		cJSON_AddNullToObject(o, key);
}

static cJSON *to_json(const wl_rawside *s)
{
	cJSON *root, *o, *a;
	if (!(root = cJSON_CreateObject()))
		return NULL;
	cJSON_AddStringToObject(root, K_FORMAT, FORMAT_NAME);
	cJSON_AddNumberToObject(root, K_VERSION, 1);
	o = cJSON_AddObjectToObject(root, K_WATCH);
	cJSON_AddBoolToObject(o, K_ENABLED, s->enabled);
	if (s->enabled) {
		cJSON_AddNumberToObject(o, K_PERIOD, s->period_s);
		cJSON_AddNumberToObject(o, K_THRESHOLD, s->threshold_px);
		cJSON_AddNumberToObject(o, K_MIN_MARKERS, s->min_markers);
		cJSON_AddNumberToObject(o, K_MARKERS, s->markers);
		cJSON_AddNumberToObject(o, K_IN_VIEW, s->markers_in_view);
		cJSON_AddNumberToObject(o, K_CHECKS, s->checks);
		cJSON_AddNumberToObject(o, K_TAG_CHECKS, s->tag_checks);
	}
	a = cJSON_AddArrayToObject(root, K_MOVES);
	for (int i = 0; i < s->n_moves && i < WL_RAWSIDE_MAX_MOVES; i++) {
		const wl_rawside_move *mv = &s->moves[i];
		cJSON *m = cJSON_CreateObject();
		cJSON_AddItemToArray(a, m);
		cJSON_AddNumberToObject(m, K_T, mv->t_s);
		cJSON_AddNumberToObject(m, K_FRAME, (double)mv->frame);
		add_num_or_null(m, K_LAST_STILL, mv->last_still_t_s);
		cJSON_AddNumberToObject(m, K_SHIFT, mv->shift_px);
		cJSON_AddBoolToObject(m, K_REREG, mv->reregistered);
		cJSON_AddNumberToObject(m, K_MARKERS, mv->markers);
		add_num_or_null(m, K_RMS, mv->rms_px);
		add_num_or_null(m, K_TURN, mv->turn_deg);
		add_num_or_null(m, K_CENTRE, mv->centre_shift_mm);
	}
	a = cJSON_AddArrayToObject(root, K_SUSPECT);
	if (isfinite(s->suspect_from_t_s)) {
		cJSON *x = cJSON_CreateObject();
		cJSON_AddItemToArray(a, x);
		cJSON_AddNumberToObject(x, K_FROM, s->suspect_from_t_s);
		add_num_or_null(x, K_TO, s->suspect_to_t_s);
	}
	return root;
}

wl_status wl_rawside_stage(const char *raw_csv_path, const wl_rawside *s, wl_afile **out, wl_err *err)
{
	char path[4096], *text;
	cJSON *root;
	wl_afile *af = NULL;
	wl_status st;
	size_t n;
	*out = NULL;
	if (!wl_rawside_path(raw_csv_path, path, sizeof path))
		return wl_err_set(err, WL_EINVAL, "'%s': path too long for its sidecar", raw_csv_path);
	if (!(root = to_json(s)))
		return wl_err_set(err, WL_ENOMEM, "out of memory for the RAW sidecar");
	text = cJSON_Print(root);
	cJSON_Delete(root);
	if (!text)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the RAW sidecar");
	n = strlen(text);
	if ((st = wl_afile_open(path, &af, err)) == WL_OK) {
		if (fwrite(text, 1, n, wl_afile_fp(af)) != n || fputc('\n', wl_afile_fp(af)) == EOF)
			st = wl_err_set(err, WL_EIO, "cannot write '%s': %s", path, strerror(errno));
		if (st == WL_OK)
			st = wl_afile_sync(af, err);
		if (st != WL_OK)
			wl_afile_abort(af);
		else
			*out = af;
	}
	cJSON_free(text);
	return st;
}

wl_status wl_rawside_write(const char *raw_csv_path, const wl_rawside *s, wl_err *err)
{
	wl_afile *af;
	wl_status st = wl_rawside_stage(raw_csv_path, s, &af, err);
	return st != WL_OK ? st : wl_afile_commit(af, err);
}

/* The sidecar's text and parse, or *root NULL when there is none. */
static void load(const char *path, cJSON **root)
{
	char *text = NULL;
	size_t len = 0;
	wl_err ignore;
	*root = NULL;
	if (wl_read_file(path, 1 << 24, &text, &len, &ignore) != WL_OK)
		return;
	*root = cJSON_ParseWithLength(text, len);
	free(text);
}

static int is_rawside(const cJSON *root)
{
	const char *fmt = wl_json_string_or(root, K_FORMAT, NULL);
	return fmt && strcmp(fmt, FORMAT_NAME) == 0;
}

wl_status wl_rawside_check(const char *raw_csv_path, wl_err *err)
{
	char path[4096];
	cJSON *root;
	wl_status st = WL_OK;
	FILE *f;
	if (!wl_rawside_path(raw_csv_path, path, sizeof path))
		return wl_err_set(err, WL_EINVAL, "'%s': path too long for its sidecar", raw_csv_path);
	if (!(f = fopen(path, "rb")))
		return WL_OK; /* nothing there (or unreadable: the atomic write will say) */
	fclose(f);
	load(path, &root);
	if (!is_rawside(root))
		st = wl_err_set(err, WL_EINVAL,
		                "'%s' exists and is not a RAW sidecar, but it is where the sidecar of '%s' "
		                "goes (same stem, .json): name the RAW.csv differently",
		                path, raw_csv_path);
	cJSON_Delete(root);
	return st;
}

static int bool_or(const cJSON *o, const char *key, int fallback)
{
	const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
	return cJSON_IsBool(v) ? cJSON_IsTrue(v) : fallback;
}

wl_status wl_rawside_read(const char *raw_csv_path, wl_rawside *s, int *found, wl_err *err)
{
	char path[4096];
	cJSON *root;
	const cJSON *o, *a, *m;
	wl_rawside_init(s);
	*found = 0;
	if (!wl_rawside_path(raw_csv_path, path, sizeof path))
		return WL_OK;
	load(path, &root);
	if (!is_rawside(root)) {
		cJSON_Delete(root);
		return WL_OK;
	}
	o = cJSON_GetObjectItemCaseSensitive(root, K_WATCH);
	a = cJSON_GetObjectItemCaseSensitive(root, K_MOVES);
	if (!cJSON_IsObject(o) || !cJSON_IsArray(a)) {
		cJSON_Delete(root);
		return wl_err_set(
		        err, WL_EFORMAT,
		        "%s: a RAW sidecar without '%s' or '%s': track the clip again to rewrite it", path,
		        K_WATCH, K_MOVES);
	}
	s->enabled = bool_or(o, K_ENABLED, 0);
	s->period_s = wl_json_number_or(o, K_PERIOD, NAN);
	s->threshold_px = wl_json_number_or(o, K_THRESHOLD, NAN);
	s->min_markers = (int)wl_json_number_or(o, K_MIN_MARKERS, 0);
	s->markers = (int)wl_json_number_or(o, K_MARKERS, 0);
	s->markers_in_view = (int)wl_json_number_or(o, K_IN_VIEW, 0);
	s->checks = (int)wl_json_number_or(o, K_CHECKS, 0);
	s->tag_checks = (int)wl_json_number_or(o, K_TAG_CHECKS, 0);
	cJSON_ArrayForEach(m, a)
	{
		wl_rawside_move *mv;
		if (s->n_moves >= WL_RAWSIDE_MAX_MOVES)
			break;
		mv = &s->moves[s->n_moves];
		mv->t_s = wl_json_number_or(m, K_T, NAN);
		if (!isfinite(mv->t_s)) {
			cJSON_Delete(root);
			return wl_err_set(err, WL_EFORMAT,
			                  "%s: camera move %d has no '%s': track the clip again", path,
			                  s->n_moves + 1, K_T);
		}
		mv->frame = (long long)wl_json_number_or(m, K_FRAME, -1);
		mv->last_still_t_s = wl_json_number_or(m, K_LAST_STILL, NAN);
		mv->shift_px = wl_json_number_or(m, K_SHIFT, NAN);
		mv->markers = (int)wl_json_number_or(m, K_MARKERS, 0);
		mv->reregistered = bool_or(m, K_REREG, 0);
		mv->rms_px = wl_json_number_or(m, K_RMS, NAN);
		mv->turn_deg = wl_json_number_or(m, K_TURN, NAN);
		mv->centre_shift_mm = wl_json_number_or(m, K_CENTRE, NAN);
		s->n_moves++;
	}
	a = cJSON_GetObjectItemCaseSensitive(root, K_SUSPECT);
	if (cJSON_IsArray(a) && cJSON_GetArraySize(a) > 0) {
		m = cJSON_GetArrayItem(a, 0);
		s->suspect_from_t_s = wl_json_number_or(m, K_FROM, NAN);
		s->suspect_to_t_s = wl_json_number_or(m, K_TO, NAN);
	}
	cJSON_Delete(root);
	*found = 1;
	return WL_OK;
}

int wl_rawside_moves_in(const wl_rawside *s, double t0_s, double t1_s)
{
	int n = 0;
	for (int i = 0; i < s->n_moves; i++) {
		const wl_rawside_move *mv = &s->moves[i];
		double a = isfinite(mv->last_still_t_s) ? mv->last_still_t_s : -INFINITY;
		if (mv->t_s >= t0_s && a <= t1_s)
			n++;
	}
	return n;
}

double wl_rawside_suspect_s(const wl_rawside *s, double t0_s, double t1_s)
{
	double a, b;
	if (!isfinite(s->suspect_from_t_s))
		return 0;
	a = fmax(t0_s, s->suspect_from_t_s);
	b = isfinite(s->suspect_to_t_s) ? fmin(t1_s, s->suspect_to_t_s) : t1_s;
	return b > a ? b - a : 0;
}
