/*
 * cleanio.c: the clean stage's files: the tank outline from CAL.json, and
 * CLEAN.csv with its CLEAN.json sidecar (formats in DEVELOPERS.md; the
 * sidecar's keys are listed in docs/clean.md).  Both outputs go through
 * core/afile.h and are committed only after both were written in full.
 */
#include "clean/clean.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "core/afile.h"
#include "core/csvio.h"
#include "core/jsonio.h"
#include "core/sha256.h"
#include "wl_version.h"

wl_status wl_clean_load_outline(const char *cal_path, wl_clean_params *p, char sha_hex[65], wl_err *err)
{
	cJSON *root = NULL, *a, *pt;
	wl_status st;
	int n = 0;
	uint64_t bytes;
	p->n_outline = 0;
	if ((st = wl_json_load(cal_path, &root, err)))
		return st;
	if ((st = wl_sha256_file(cal_path, sha_hex, &bytes, err)))
		goto out;
	a = cJSON_GetObjectItemCaseSensitive(root, "tank_outline_m");
	if (!a || (cJSON_IsArray(a) && cJSON_GetArraySize(a) == 0))
		goto out; /* no outline (calibrate writes an empty array): no wall cut, the CLI says so */
	if (!cJSON_IsArray(a) || cJSON_GetArraySize(a) < 3 || cJSON_GetArraySize(a) > WL_CLEAN_MAX_OUTLINE) {
		st = wl_err_set(err, WL_EFORMAT,
		                "%s: key 'tank_outline_m' must be an array of 3 to %d [x, y] pairs in metres",
		                cal_path, WL_CLEAN_MAX_OUTLINE);
		goto out;
	}
	cJSON_ArrayForEach(pt, a)
	{
		const cJSON *x = cJSON_GetArrayItem(pt, 0), *y = cJSON_GetArrayItem(pt, 1);
		if (!cJSON_IsArray(pt) || cJSON_GetArraySize(pt) != 2 || !cJSON_IsNumber(x) ||
		    !cJSON_IsNumber(y) || !isfinite(x->valuedouble) || !isfinite(y->valuedouble)) {
			st = wl_err_set(err, WL_EFORMAT,
			                "%s: key 'tank_outline_m': item %d is not an [x, y] pair of numbers",
			                cal_path, n);
			goto out;
		}
		p->outline_m[n][0] = x->valuedouble;
		p->outline_m[n][1] = y->valuedouble;
		n++;
	}
	p->n_outline = n;
out:
	cJSON_Delete(root);
	return st;
}

/* ---------------------------------------------------------------- CSV */

static const char *const HEADER[] = {
        "t_s",    "frame",  "id",      "x_m",    "y_m", "heading_rad", "speed_mps", "yaw_rate_radps",
        "vx_mps", "vy_mps", "segment", "status", "cut", NULL};

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
		num(t, "window_s", rb->window_s);
		num(t, "unjudged_s", rb->settle_unjudged_s);
		cJSON_AddStringToObject(t, "turn_rate_from", rb->turn_source ? rb->turn_source : "none");
		num(t, "cut_s", rb->trim_s - rb->t_first_s);
		num(t, "cut_share",
		    (rb->trim_s - rb->t_first_s) / (isfinite(rb->wall_s) ? rb->wall_s - rb->t_first_s
		                                                         : rb->t_last_s - rb->t_first_s));
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

static char *sidecar_text(const wl_clean_raw *raw, const wl_clean_params *p, const wl_clean_source *src,
                          const wl_clean_result *res)
{
	cJSON *root = cJSON_CreateObject(), *o, *a;
	char *text;
	cJSON_AddStringToObject(root, "format", "wakeline clean sidecar 1");
	cJSON_AddStringToObject(root, "tool_version", WL_VERSION);
	cJSON_AddStringToObject(root, "tool_revision", WL_VERSION_GIT);
	o = cJSON_AddObjectToObject(root, "input");
	cJSON_AddStringToObject(o, "path", raw->path);
	cJSON_AddNumberToObject(o, "bytes", (double)raw->bytes);
	cJSON_AddStringToObject(o, "sha256", raw->sha256_hex);
	cJSON_AddNumberToObject(o, "rows", (double)raw->nrows);
	o = cJSON_AddObjectToObject(root, "calibration");
	if (src && src->cal_path) {
		cJSON_AddStringToObject(o, "path", src->cal_path);
		cJSON_AddStringToObject(o, "sha256", src->cal_sha256 ? src->cal_sha256 : "");
	} else {
		cJSON_AddNullToObject(o, "path");
	}
	cJSON_AddStringToObject(o, "outline_source",
	                        p->n_outline == 0       ? "none (no wall cut)"
	                        : src && src->tank_rect ? "--tank rectangle"
	                                                : "tank_outline_m");
	a = cJSON_AddArrayToObject(o, "tank_outline_m");
	for (int i = 0; i < p->n_outline; i++)
		cJSON_AddItemToArray(a, cJSON_CreateDoubleArray(p->outline_m[i], 2));
	cJSON_AddItemToObject(root, "parameters", params_json(p));
	a = cJSON_AddArrayToObject(root, "robots");
	for (size_t k = 0; k < res->nrobots; k++)
		cJSON_AddItemToArray(a, robot_json(&res->robots[k]));
	text = cJSON_Print(root);
	cJSON_Delete(root);
	return text;
}

wl_status wl_clean_write(const char *csv_path, const char *json_path, const wl_clean_raw *raw,
                         const wl_clean_params *p, const wl_clean_source *src, const wl_clean_result *res,
                         wl_err *err)
{
	wl_afile *fc = NULL, *fj = NULL;
	char *text = sidecar_text(raw, p, src, res);
	wl_status st;
	if (!text)
		return wl_err_set(err, WL_ENOMEM, "out of memory writing '%s'", json_path);
	if ((st = wl_afile_open(csv_path, &fc, err)) || (st = wl_afile_open(json_path, &fj, err)))
		goto fail;
	write_csv(wl_afile_fp(fc), res);
	fputs(text, wl_afile_fp(fj));
	fputc('\n', wl_afile_fp(fj));
	/* commit the table first: a sidecar never describes a table that was
	 * not written */
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
