/*
 * clean.c (formats): CLEAN.csv and its CLEAN.json sidecar (see
 * formats/clean.h): the column and key tables, the writer of both (committed
 * only after both were written in full), the streaming CLEAN.csv reader and
 * the sidecar reader.
 */
#define _POSIX_C_SOURCE 200809L
#include "formats/clean.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "core/afile.h"
#include "core/csvio.h"
#include "core/jsonio.h"
#include "formats/format.h"
#include "wl_version.h"

/* ---------------------------------------------------------------- CSV */

static const wl_format CLEAN_CSV = {"CLEAN.csv", NULL, 1, "wakeline clean"};
static const wl_format SIDECAR = {"CLEAN.json", "wakeline clean sidecar", 1, "wakeline clean"};

/* The columns, in file order. */
enum { C_T, C_FRAME, C_ID, C_X, C_Y, C_H, C_SPEED, C_YAW, C_VX, C_VY, C_SEG, C_STATUS, C_CUT, C_HM, C_N };
static const char *const HEADER[] = {
        "t_s",    "frame",  "id",      "x_m",    "y_m", "heading_rad",      "speed_mps", "yaw_rate_radps",
        "vx_mps", "vy_mps", "segment", "status", "cut", "heading_meas_rad", NULL};
/* What a reader needs. */
static const char *const REQUIRED[] = {"t_s", "id", "x_m", "y_m", "segment", "status", NULL};

static const char *const STATUS[] = {"measured", "filled", "outlier"};
static const char *const CUTS[] = {"", "start", "wall", "gap", "still"};

const char *wl_clean_status_name(wl_clean_status s)
{
	return (unsigned)s < sizeof STATUS / sizeof STATUS[0] ? STATUS[s] : "";
}

const char *wl_clean_cut_name(wl_clean_cut c)
{
	return (unsigned)c < sizeof CUTS / sizeof CUTS[0] ? CUTS[c] : "";
}

static void write_csv(FILE *fp, const wl_clean_result *res)
{
	wl_csv_writer w;
	wl_csvw_init(&w, fp);
	wl_csvw_header(&w, HEADER);
	for (size_t i = 0; i < res->nrows; i++) {
		const wl_clean_row *r = &res->rows[i];
		wl_csvw_num(&w, r->t_s, 6);
		wl_csvw_int(&w, r->frame);
		wl_csvw_int(&w, r->id);
		wl_csvw_num(&w, r->x_m, 6);
		wl_csvw_num(&w, r->y_m, 6);
		wl_csvw_num(&w, r->heading_rad, 6);
		wl_csvw_num(&w, r->speed_mps, 6);
		wl_csvw_num(&w, r->yaw_rate_radps, 6);
		wl_csvw_num(&w, r->vx_mps, 6);
		wl_csvw_num(&w, r->vy_mps, 6);
		wl_csvw_int(&w, r->segment);
		wl_csvw_str(&w, wl_clean_status_name(r->status));
		if (r->cut == WL_CUT_NONE)
			wl_csvw_empty(&w);
		else
			wl_csvw_str(&w, wl_clean_cut_name(r->cut));
		wl_csvw_num(&w, r->heading_meas_rad, 6);
		wl_csvw_end(&w);
	}
}

/* ---------------------------------------------------------------- JSON */

static void num(cJSON *o, const char *k, double v)
{
	if (isfinite(v))
		cJSON_AddNumberToObject(o, k, v);
	else
		cJSON_AddNullToObject(o, k);
}

static cJSON *params_json(const wl_clean_params *p)
{
	cJSON *o = cJSON_CreateObject();
	cJSON_AddStringToObject(o, "smoother", p->smoother == WL_CLEAN_SG ? "sg" : "rts");
	cJSON_AddStringToObject(o, "model",
	                        p->model_dim == 3 ? "constant-acceleration" : "constant-velocity");
	num(o, "sigma_pos_m_given", p->sigma_pos_m > 0 ? p->sigma_pos_m : NAN);
	num(o, "sigma_heading_rad_given", p->sigma_heading_rad > 0 ? p->sigma_heading_rad : NAN);
	num(o, "q_pos_given", p->q_pos > 0 ? p->q_pos : NAN);
	num(o, "q_heading_given", p->q_heading > 0 ? p->q_heading : NAN);
	num(o, "gate_prob", p->gate_prob);
	num(o, "max_reject_frac", p->max_reject_frac);
	if (p->smoother == WL_CLEAN_SG) {
		cJSON_AddNumberToObject(o, "sg_window", p->sg_window);
		cJSON_AddNumberToObject(o, "sg_order", p->sg_order);
	}
	num(o, "max_gap_s", p->max_gap_s);
	cJSON_AddStringToObject(o, "trim",
	                        p->trim == WL_TRIM_AUTO   ? "auto"
	                        : p->trim == WL_TRIM_NONE ? "none"
	                                                  : "fixed");
	if (p->trim == WL_TRIM_FIXED)
		num(o, "trim_s", p->trim_s);
	num(o, "settle_tol", p->settle_tol);
	num(o, "settle_yaw_tol_radps", p->settle_yaw_tol_radps);
	num(o, "default_window_s", p->default_window_s);
	num(o, "min_speed_mps", p->min_speed_mps);
	num(o, "min_segment_s", p->min_segment_s);
	num(o, "body_diameter_m", p->body_diameter_m);
	num(o, "wall_margin_m", p->wall_margin_m >= 0 ? p->wall_margin_m : 0.5 * p->body_diameter_m);
	num(o, "rate_hz", p->rate_hz > 0 ? p->rate_hz : NAN);
	return o;
}

static cJSON *robot_json(const wl_clean_robot *rb)
{
	cJSON *o = cJSON_CreateObject(), *n, *a, *t;
	cJSON_AddNumberToObject(o, "id", (double)rb->id);
	cJSON_AddBoolToObject(o, "still", rb->still);
	cJSON_AddNumberToObject(o, "rows_in", (double)rb->rows_in);
	cJSON_AddNumberToObject(o, "rows_out", (double)rb->rows_out);
	cJSON_AddNumberToObject(o, "rows_dropped", (double)rb->dropped);
	cJSON_AddNumberToObject(o, "measured", (double)rb->measured);
	cJSON_AddNumberToObject(o, "filled", (double)rb->filled);
	t = cJSON_AddObjectToObject(o, "outliers");
	cJSON_AddNumberToObject(t, "total", (double)rb->outliers);
	cJSON_AddNumberToObject(t, "position", (double)rb->outliers_pos);
	cJSON_AddNumberToObject(t, "heading", (double)rb->outliers_heading);
	n = cJSON_AddObjectToObject(o, "noise");
	num(n, "sigma_pos_m", rb->sigma_pos_m);
	num(n, "sigma_heading_rad", rb->sigma_heading_rad);
	cJSON_AddStringToObject(n, "sigma_source",
	                        rb->sigma_estimated == 2 ? "default (too few detections to estimate)"
	                        : rb->sigma_estimated    ? "estimated (MAD of neighbour-line residuals)"
	                                                 : "given");
	num(n, "sigma_pos_floor_m", rb->sigma_pos_floor_m);
	num(n, "sigma_heading_floor_rad", rb->sigma_heading_floor_rad);
	num(n, "q_pos_m2ps3", rb->q_pos);
	num(n, "q_heading_rad2ps3", rb->q_heading);
	cJSON_AddStringToObject(n, "q_source",
	                        isfinite(rb->q_pos) ? (rb->q_estimated ? "maximum likelihood" : "given")
	                                            : "not used (Savitzky-Golay)");
	num(n, "speed_sigma_mps", rb->speed_sigma_mps);
	/* the estimates before the model's own check widened them */
	num(n, "sigma_pos_estimated_m", rb->sigma_pos_est_m);
	num(n, "sigma_heading_estimated_rad", rb->sigma_heading_est_rad);
	num(n, "q_pos_estimated_m2ps3", rb->q_pos_est);
	num(n, "q_heading_estimated_rad2ps3", rb->q_heading_est);
	cJSON_AddNumberToObject(n, "widened_position", rb->widen_pos);
	cJSON_AddNumberToObject(n, "widened_heading", rb->widen_heading);
	t = cJSON_AddObjectToObject(o, "restarts");
	cJSON_AddNumberToObject(t, "position", (double)rb->restarts_pos);
	cJSON_AddNumberToObject(t, "heading", (double)rb->restarts_heading);
	num(o, "t_first_s", rb->t_first_s);
	num(o, "t_last_s", rb->t_last_s);
	num(o, "speed_threshold_mps", rb->speed_threshold_mps);
	num(o, "motion_onset_s", rb->onset_s);
	num(o, "oscillation_period_s", rb->period_s);
	num(o, "settle_window_s", rb->window_s);
	num(o, "steady_speed_mps", rb->speed_ref_mps);
	num(o, "steady_yaw_rate_radps", rb->yaw_ref_radps);
	num(o, "settle_tol_mps", rb->settle_tol_mps);
	num(o, "settle_tol_radps", rb->settle_tol_radps);
	t = cJSON_AddObjectToObject(o, "trim");
	num(t, "t_s", rb->trim_s);
	cJSON_AddStringToObject(t, "reason", rb->trim_reason ? rb->trim_reason : "");
	if (rb->trim_reason &&
	    (strcmp(rb->trim_reason, "settled") == 0 || strcmp(rb->trim_reason, "not-settled") == 0)) {
		double end = isfinite(rb->wall_s) ? rb->wall_s : rb->t_last_s;
		num(t, "window_s", rb->window_s);
		num(t, "unjudged_s", rb->settle_unjudged_s);
		cJSON_AddStringToObject(t, "turn_rate_from", rb->turn_source ? rb->turn_source : "none");
		num(t, "cut_s", rb->trim_s - rb->t_first_s);
		num(t, "cut_share",
		    end > rb->t_first_s ? (rb->trim_s - rb->t_first_s) / (end - rb->t_first_s) : NAN);
	}
	t = cJSON_AddObjectToObject(o, "end");
	num(t, "t_s", rb->wall_s);
	cJSON_AddStringToObject(t, "reason", rb->end_reason ? rb->end_reason : "");
	num(t, "distance_to_outline_m", rb->wall_dist_m);
	a = cJSON_AddArrayToObject(o, "gaps");
	for (size_t i = 0; i < rb->ngaps; i++) {
		cJSON *g = cJSON_CreateObject();
		num(g, "t0_s", rb->gaps[i].t0_s);
		num(g, "t1_s", rb->gaps[i].t1_s);
		cJSON_AddStringToObject(g, "action", rb->gaps[i].filled ? "filled" : "split");
		cJSON_AddItemToArray(a, g);
	}
	a = cJSON_AddArrayToObject(o, "segments");
	for (size_t i = 0; i < rb->nsegments; i++) {
		cJSON *g = cJSON_CreateObject();
		cJSON_AddNumberToObject(g, "segment", (double)i);
		num(g, "t0_s", rb->segments[i].t0_s);
		num(g, "t1_s", rb->segments[i].t1_s);
		cJSON_AddNumberToObject(g, "rows", (double)rb->segments[i].rows);
		cJSON_AddItemToArray(a, g);
	}
	return o;
}

static void num_or_null(cJSON *o, const char *key, double v)
{
	if (isfinite(v))
		cJSON_AddNumberToObject(o, key, v);
	else
		cJSON_AddNullToObject(o, key);
}

/* "camera": what the camera watch saw while RAW.csv was tracked (null: no
 * RAW sidecar) */
static void add_camera(cJSON *root, const wl_rawside *c)
{
	cJSON *o, *a;
	if (!c) {
		cJSON_AddNullToObject(root, "camera");
		return;
	}
	o = cJSON_AddObjectToObject(root, "camera");
	cJSON_AddBoolToObject(o, "watched", c->enabled);
	if (c->enabled) {
		num_or_null(o, "threshold_px", c->threshold_px);
		cJSON_AddNumberToObject(o, "min_markers", c->min_markers);
	}
	a = cJSON_AddArrayToObject(o, "moves");
	for (int i = 0; i < c->n_moves; i++) {
		cJSON *m = cJSON_CreateObject();
		cJSON_AddItemToArray(a, m);
		cJSON_AddNumberToObject(m, "t_s", c->moves[i].t_s);
		num_or_null(m, "last_still_t_s", c->moves[i].last_still_t_s);
		cJSON_AddNumberToObject(m, "shift_px", c->moves[i].shift_px);
		cJSON_AddBoolToObject(m, "reregistered", c->moves[i].reregistered);
		cJSON_AddNumberToObject(m, "markers", c->moves[i].markers);
		num_or_null(m, "rms_px", c->moves[i].rms_px);
		num_or_null(m, "turn_deg", c->moves[i].turn_deg);
		num_or_null(m, "centre_shift_mm", c->moves[i].centre_shift_mm);
	}
	num_or_null(o, "suspect_from_t_s", c->suspect_from_t_s);
	num_or_null(o, "suspect_to_t_s", c->suspect_to_t_s);
}

static char *sidecar_text(const wl_clean_params *p, const wl_clean_source *src, const wl_clean_result *res)
{
	cJSON *root = cJSON_CreateObject(), *o, *a;
	char *text;
	if (!root)
		return NULL;
	wl_format_add_json(&SIDECAR, root);
	cJSON_AddStringToObject(root, "tool_version", WL_VERSION);
	cJSON_AddStringToObject(root, "tool_revision", WL_VERSION_GIT);
	o = cJSON_AddObjectToObject(root, "input");
	cJSON_AddStringToObject(o, "path", src->input_path ? src->input_path : "");
	cJSON_AddNumberToObject(o, "bytes", (double)src->input_bytes);
	cJSON_AddStringToObject(o, "sha256", src->input_sha256 ? src->input_sha256 : "");
	cJSON_AddNumberToObject(o, "rows", (double)src->input_rows);
	o = cJSON_AddObjectToObject(root, "calibration");
	if (src->cal_path) {
		cJSON_AddStringToObject(o, "path", src->cal_path);
		cJSON_AddStringToObject(o, "sha256", src->cal_sha256 ? src->cal_sha256 : "");
	} else {
		cJSON_AddNullToObject(o, "path");
	}
	cJSON_AddStringToObject(o, "outline_source",
	                        p->n_outline == 0 ? "none (no wall cut)"
	                        : src->tank_rect  ? "--tank rectangle"
	                                          : "tank_outline_m");
	a = cJSON_AddArrayToObject(o, "tank_outline_m");
	for (int i = 0; i < p->n_outline; i++)
		cJSON_AddItemToArray(a, cJSON_CreateDoubleArray(p->outline_m[i], 2));
	add_camera(root, src->camera);
	cJSON_AddItemToObject(root, "parameters", params_json(p));
	a = cJSON_AddArrayToObject(root, "robots");
	for (size_t k = 0; k < res->nrobots; k++)
		cJSON_AddItemToArray(a, robot_json(&res->robots[k]));
	text = cJSON_Print(root);
	cJSON_Delete(root);
	return text;
}

wl_status wl_clean_write(const char *csv_path, const char *json_path, const wl_clean_params *p,
                         const wl_clean_source *src, const wl_clean_result *res, wl_err *err)
{
	wl_afile *fc = NULL, *fj = NULL;
	char *text = sidecar_text(p, src, res);
	wl_status st;
	if (!text)
		return wl_err_set(err, WL_ENOMEM, "out of memory writing '%s'", json_path);
	if ((st = wl_afile_open(csv_path, &fc, err)) || (st = wl_afile_open(json_path, &fj, err)))
		goto fail;
	write_csv(wl_afile_fp(fc), res);
	fputs(text, wl_afile_fp(fj));
	fputc('\n', wl_afile_fp(fj));
	/* both on disk before either replaces a previous output (a failure up to
	 * here leaves the previous pair as it was), then the table first: a
	 * sidecar never describes a table that was not written */
	if ((st = wl_afile_sync(fc, err)) || (st = wl_afile_sync(fj, err)))
		goto fail;
	st = wl_afile_commit(fc, err);
	fc = NULL;
	if (st)
		goto fail;
	st = wl_afile_commit(fj, err);
	fj = NULL;
fail:
	wl_afile_abort(fc);
	wl_afile_abort(fj);
	cJSON_free(text);
	return st;
}

/* ---------------------------------------------------------- reading CSV */

typedef struct {
	wl_clean_row_fn fn;
	void *ctx;
	int col[C_N];
	int have_header;
} rctx;

/* The cell with spaces and a trailing CR trimmed, into buf. */
static const char *trimmed(const wl_csv_row *row, int col, char *buf, size_t cap)
{
	const char *s = row->fields[col];
	size_t n;
	while (*s == ' ' || *s == '\t')
		s++;
	n = strlen(s);
	while (n && (s[n - 1] == ' ' || s[n - 1] == '\t' || s[n - 1] == '\r'))
		n--;
	snprintf(buf, cap, "%.*s", (int)n, s);
	return buf;
}

/* Index of the cell's word in names[0..n-1], or -1. */
static int word_index(const wl_csv_row *row, int col, const char *const *names, int n)
{
	char buf[32];
	if (col < 0 || (size_t)col >= row->nfields)
		return n > 0 && names[0][0] == '\0' ? 0 : -1;
	trimmed(row, col, buf, sizeof buf);
	for (int i = 0; i < n; i++)
		if (strcmp(buf, names[i]) == 0)
			return i;
	return -1;
}

static wl_status opt_num(const wl_csv_row *row, int col, int which, double *out, wl_err *err)
{
	*out = NAN;
	if (col < 0 || wl_csv_empty(row, col))
		return WL_OK;
	return wl_csv_get_double(row, col, HEADER[which], out, err);
}

static wl_status parse_row(const rctx *c, const wl_csv_row *row, wl_clean_row *r, wl_err *err)
{
	long seg, frame = -1;
	int k;
	wl_status st;
	memset(r, 0, sizeof *r);
	r->line = row->line;
	if ((st = wl_csv_get_double(row, c->col[C_T], HEADER[C_T], &r->t_s, err)) ||
	    (st = wl_csv_get_long(row, c->col[C_ID], HEADER[C_ID], &r->id, err)) ||
	    (st = wl_csv_get_long(row, c->col[C_SEG], HEADER[C_SEG], &seg, err)))
		return st;
	if (c->col[C_FRAME] >= 0 && !wl_csv_empty(row, c->col[C_FRAME]) &&
	    (st = wl_csv_get_long(row, c->col[C_FRAME], HEADER[C_FRAME], &frame, err)))
		return st;
	if (seg < -1 || seg > 1000000000L)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: column '%s': %ld is not a segment number (-1 or more)", row->path,
		                  row->line, HEADER[C_SEG], seg);
	r->frame = frame;
	r->segment = (int)seg;
	if ((k = word_index(row, c->col[C_STATUS], STATUS, 3)) < 0) {
		char buf[32];
		return wl_err_set(
		        err, WL_EFORMAT,
		        "%s:%ld: status '%s' is not measured, filled or outlier: fix the clean stage's "
		        "output",
		        row->path, row->line,
		        (size_t)c->col[C_STATUS] < row->nfields
		                ? trimmed(row, c->col[C_STATUS], buf, sizeof buf)
		                : "");
	}
	r->status = (wl_clean_status)k;
	if ((k = c->col[C_CUT] < 0 ? 0 : word_index(row, c->col[C_CUT], CUTS, 5)) < 0) {
		char buf[32];
		return wl_err_set(
		        err, WL_EFORMAT, "%s:%ld: column '%s': '%s' is not start, wall, gap, still or empty",
		        row->path, row->line, HEADER[C_CUT], trimmed(row, c->col[C_CUT], buf, sizeof buf));
	}
	r->cut = (wl_clean_cut)k;
	if ((st = opt_num(row, c->col[C_X], C_X, &r->x_m, err)) ||
	    (st = opt_num(row, c->col[C_Y], C_Y, &r->y_m, err)) ||
	    (st = opt_num(row, c->col[C_H], C_H, &r->heading_rad, err)) ||
	    (st = opt_num(row, c->col[C_SPEED], C_SPEED, &r->speed_mps, err)) ||
	    (st = opt_num(row, c->col[C_YAW], C_YAW, &r->yaw_rate_radps, err)) ||
	    (st = opt_num(row, c->col[C_VX], C_VX, &r->vx_mps, err)) ||
	    (st = opt_num(row, c->col[C_VY], C_VY, &r->vy_mps, err)) ||
	    (st = opt_num(row, c->col[C_HM], C_HM, &r->heading_meas_rad, err)))
		return st;
	return WL_OK;
}

static wl_status on_row(const wl_csv_row *row, void *vctx, wl_err *err)
{
	rctx *c = vctx;
	wl_clean_row r;
	wl_status st;
	if (!c->have_header) {
		if ((st = wl_format_check_header(&CLEAN_CSV, row, REQUIRED, err)))
			return st;
		for (int i = 0; i < C_N; i++)
			c->col[i] = wl_csv_col(row, HEADER[i]);
		c->have_header = 1;
		return WL_OK;
	}
	if ((st = parse_row(c, row, &r, err)))
		return st;
	return c->fn(&r, c->ctx, err);
}

static wl_status finish(const rctx *c, wl_status st, const char *name, wl_err *err)
{
	if (!st && !c->have_header)
		return wl_err_set(err, WL_EFORMAT, "%s: the file is empty: give a CLEAN.csv with a header",
		                  name);
	return st;
}

wl_status wl_clean_read(const char *path, wl_clean_row_fn fn, void *ctx, wl_err *err)
{
	rctx c = {fn, ctx, {0}, 0};
	return finish(&c, wl_csv_read(path, on_row, &c, err), path, err);
}

wl_status wl_clean_read_mem(const char *name, const char *data, size_t len, wl_clean_row_fn fn, void *ctx,
                            wl_err *err)
{
	rctx c = {fn, ctx, {0}, 0};
	return finish(&c, wl_csv_read_mem(name, data, len, on_row, &c, err), name, err);
}

/* ------------------------------------------------------ reading the sidecar */

static void copy_str(char *dst, size_t cap, const cJSON *o, const char *key)
{
	snprintf(dst, cap, "%s", wl_json_string_or(o, key, ""));
}

static wl_status sidecar_robot(const char *name, const cJSON *o, size_t k, wl_clean_sidecar_robot *r,
                               wl_err *err)
{
	const cJSON *t = cJSON_GetObjectItemCaseSensitive(o, "trim"),
	            *e = cJSON_GetObjectItemCaseSensitive(o, "end");
	const cJSON *segs = cJSON_GetObjectItemCaseSensitive(o, "segments"), *s;
	double id = wl_json_number_or(o, "id", NAN);
	if (!cJSON_IsObject(o) || !isfinite(id) || id != floor(id) || fabs(id) > 1e15)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: robots[%zu] has no whole-number 'id': rewrite the file with "
		                  "`wakeline clean`",
		                  name, k);
	r->id = (long)id;
	r->still = cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(o, "still"));
	r->trim_s = wl_json_number_or(t, "t_s", NAN);
	r->end_s = wl_json_number_or(e, "t_s", NAN);
	copy_str(r->trim_reason, sizeof r->trim_reason, t, "reason");
	copy_str(r->end_reason, sizeof r->end_reason, e, "reason");
	{
		const cJSON *n = cJSON_GetObjectItemCaseSensitive(o, "noise"),
		            *ol = cJSON_GetObjectItemCaseSensitive(o, "outliers");
		double tot = wl_json_number_or(ol, "total", 0), meas = wl_json_number_or(o, "measured", 0);
		r->sigma_pos_m = wl_json_number_or(n, "sigma_pos_m", NAN);
		r->widened = wl_json_number_or(n, "widened_position", 0) > 0 ||
		             wl_json_number_or(n, "widened_heading", 0) > 0;
		r->outliers = tot >= 0 && tot < 1e15 ? (size_t)tot : 0;
		r->measured = meas >= 0 && meas < 1e15 ? (size_t)meas : 0;
	}
	if (!cJSON_IsArray(segs) || cJSON_GetArraySize(segs) == 0)
		return WL_OK;
	r->segments = calloc((size_t)cJSON_GetArraySize(segs), sizeof *r->segments);
	if (!r->segments)
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", name);
	cJSON_ArrayForEach(s, segs)
	{
		wl_clean_segment *g = &r->segments[r->nsegments++];
		double rows = wl_json_number_or(s, "rows", 0);
		g->t0_s = wl_json_number_or(s, "t0_s", NAN);
		g->t1_s = wl_json_number_or(s, "t1_s", NAN);
		g->rows = rows >= 0 && rows < 1e15 ? (size_t)rows : 0;
	}
	return WL_OK;
}

static void read_camera(const cJSON *o, wl_clean_sidecar *out)
{
	const cJSON *a = cJSON_GetObjectItemCaseSensitive(o, "moves"), *m;
	wl_rawside *c = &out->camera;
	wl_rawside_init(c);
	out->camera_known = cJSON_IsObject(o);
	if (!out->camera_known)
		return;
	c->enabled = cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(o, "watched"));
	c->threshold_px = wl_json_number_or(o, "threshold_px", NAN);
	c->min_markers = (int)wl_json_number_or(o, "min_markers", 0);
	cJSON_ArrayForEach(m, a)
	{
		wl_rawside_move *mv = &c->moves[c->n_moves];
		if (c->n_moves >= WL_RAWSIDE_MAX_MOVES)
			break;
		mv->t_s = wl_json_number_or(m, "t_s", NAN);
		if (!isfinite(mv->t_s))
			continue;
		mv->last_still_t_s = wl_json_number_or(m, "last_still_t_s", NAN);
		mv->shift_px = wl_json_number_or(m, "shift_px", NAN);
		mv->reregistered = cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(m, "reregistered"));
		/* absent before this version: unknown */
		mv->markers = (int)wl_json_number_or(m, "markers", 0);
		mv->rms_px = wl_json_number_or(m, "rms_px", NAN);
		mv->turn_deg = wl_json_number_or(m, "turn_deg", NAN);
		mv->centre_shift_mm = wl_json_number_or(m, "centre_shift_mm", NAN);
		mv->frame = -1;
		c->n_moves++;
	}
	c->suspect_from_t_s = wl_json_number_or(o, "suspect_from_t_s", NAN);
	c->suspect_to_t_s = wl_json_number_or(o, "suspect_to_t_s", NAN);
}

wl_status wl_clean_sidecar_parse(const char *name, const char *text, size_t len, wl_clean_sidecar *out,
                                 wl_err *err)
{
	cJSON *root = NULL;
	const cJSON *in, *cal, *robots, *o;
	wl_status st;
	memset(out, 0, sizeof *out);
	if ((st = wl_json_parse(name, text, len, &root, err)) ||
	    (st = wl_format_check_json(&SIDECAR, root, name, err)))
		goto out;
	in = cJSON_GetObjectItemCaseSensitive(root, "input");
	cal = cJSON_GetObjectItemCaseSensitive(root, "calibration");
	copy_str(out->input_path, sizeof out->input_path, in, "path");
	copy_str(out->input_sha256, sizeof out->input_sha256, in, "sha256");
	copy_str(out->cal_path, sizeof out->cal_path, cal, "path");
	copy_str(out->cal_sha256, sizeof out->cal_sha256, cal, "sha256");
	read_camera(cJSON_GetObjectItemCaseSensitive(root, "camera"), out);
	robots = cJSON_GetObjectItemCaseSensitive(root, "robots");
	if (!cJSON_IsArray(robots)) {
		st = wl_err_set(err, WL_EFORMAT,
		                "%s: key 'robots' must be an array: rewrite the file with `wakeline clean`",
		                name);
		goto out;
	}
	if (cJSON_GetArraySize(robots) > 0 &&
	    !(out->robots = calloc((size_t)cJSON_GetArraySize(robots), sizeof *out->robots))) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", name);
		goto out;
	}
	cJSON_ArrayForEach(o, robots)
	{
		if ((st = sidecar_robot(name, o, out->nrobots, &out->robots[out->nrobots], err)))
			break;
		out->nrobots++;
	}
	if (st && out->robots)
		out->nrobots++; /* the robot that failed may hold segments */
out:
	cJSON_Delete(root);
	if (st)
		wl_clean_sidecar_release(out);
	return st;
}

wl_status wl_clean_sidecar_read(const char *path, wl_clean_sidecar *out, wl_err *err)
{
	char *text = NULL;
	size_t len = 0;
	wl_status st;
	memset(out, 0, sizeof *out);
	if ((st = wl_read_file(path, WL_JSON_MAX_BYTES, &text, &len, err)))
		return st;
	st = wl_clean_sidecar_parse(path, text, len, out, err);
	free(text);
	return st;
}

void wl_clean_sidecar_release(wl_clean_sidecar *s)
{
	if (!s)
		return;
	for (size_t i = 0; i < s->nrobots; i++)
		free(s->robots[i].segments);
	free(s->robots);
	memset(s, 0, sizeof *s);
}
