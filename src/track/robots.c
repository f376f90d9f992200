/*
 * robots.c: the tracker's options: defaults, --ids, "h,s,v" triples and
 * ROBOTS.csv (id,plane_height_m,plane_height_tol_m,heading_offset_rad,body_diameter_m,tag_size_m,
 * front_hsv_lo,front_hsv_hi,back_hsv_lo,back_hsv_hi).
 */
#define _POSIX_C_SOURCE 200809L
#include "track/track.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/csvio.h"

void wl_track_opts_init(wl_track_opts *o)
{
	memset(o, 0, sizeof *o);
	o->mode = WL_TRACK_TAG;
	snprintf(o->family, sizeof o->family, "tag36h11");
	o->plane_height_m = NAN;
	o->rescan_s = 2.0;
	o->quad_decimate = 2.0f;
	o->window_decimate = 0.0f; /* auto: by tag size */
	o->quad_sigma = 0.0f;
	o->decode_sharpening = 0.25;
	o->max_hamming = 0;
	o->min_margin = 20.0;
	o->min_margin_h1 = 60.0;
	o->edge_px = 2;
	o->min_blob_px = 12;
	o->max_blob_px = 200000;
	o->min_fill = 0.4;
	o->lost_after = 3;
	o->motion_min_m = 0.005;
	o->hold_max_s = 3.0;
	o->hold_min_score = 0.4;
	o->readout_s = NAN; /* CAL.json's readout_ms */
}

wl_robot_spec *wl_track_robot(wl_track_opts *o, int id)
{
	wl_robot_spec *r;
	for (int i = 0; i < o->n_robots; i++)
		if (o->robots[i].id == id)
			return &o->robots[i];
	if (o->n_robots >= WL_TRACK_MAX_ROBOTS)
		return NULL;
	r = &o->robots[o->n_robots++];
	memset(r, 0, sizeof *r);
	r->id = id;
	r->plane_height_m = NAN;
	r->plane_height_tol_m = NAN;
	r->heading_offset_rad = 0.0;
	r->body_diameter_m = NAN;
	r->tag_size_m = NAN;
	return r;
}

wl_status wl_track_parse_ids(const char *s, wl_track_opts *o, wl_err *err)
{
	char buf[1024], *save = NULL, *tok;
	if (strlen(s) >= sizeof buf)
		return wl_err_set(err, WL_EINVAL, "--ids: list too long");
	snprintf(buf, sizeof buf, "%s", s);
	for (tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save)) {
		long id;
		if (!wl_parse_long(tok, &id) || id < 0 || id > 1000000)
			return wl_err_set(err, WL_EINVAL,
			                  "--ids: '%s' is not a tag id: give whole numbers like 3,7", tok);
		if (!wl_track_robot(o, (int)id))
			return wl_err_set(err, WL_ELIMIT, "--ids: more than %d robots", WL_TRACK_MAX_ROBOTS);
	}
	if (o->n_robots == 0)
		return wl_err_set(err, WL_EINVAL, "--ids: empty list: give ids like 3,7");
	o->restrict_ids = 1;
	return WL_OK;
}

int wl_track_parse_hsv(const char *s, int out[3])
{
	char buf[64], *save = NULL, *tok;
	int k = 0;
	if (strlen(s) >= sizeof buf)
		return 0;
	snprintf(buf, sizeof buf, "%s", s);
	for (tok = strtok_r(buf, ",; ", &save); tok; tok = strtok_r(NULL, ",; ", &save)) {
		long v;
		if (k >= 3 || !wl_parse_long(tok, &v) || v < 0 || v > (k == 0 ? 179 : 255))
			return 0;
		out[k++] = (int)v;
	}
	return k == 3;
}

typedef struct {
	wl_track_opts *o;
	int c_id, c_plane, c_tol, c_off, c_diam, c_tag, c_hsv[4];
} robots_ctx;

static const char *const hsv_cols[4] = {"front_hsv_lo", "front_hsv_hi", "back_hsv_lo", "back_hsv_hi"};

static wl_status robots_row(const wl_csv_row *row, void *vctx, wl_err *err)
{
	robots_ctx *c = vctx;
	static const char *const req[] = {"id", NULL};
	long id;
	wl_robot_spec *r;
	wl_status st;
	if (row->index == 0) {
		if ((st = wl_csv_require(row, req, err)) != WL_OK)
			return wl_err_prefix(err, st, "%s", row->path);
		c->c_id = wl_csv_col(row, "id");
		c->c_plane = wl_csv_col(row, "plane_height_m");
		c->c_tol = wl_csv_col(row, "plane_height_tol_m");
		c->c_off = wl_csv_col(row, "heading_offset_rad");
		c->c_diam = wl_csv_col(row, "body_diameter_m");
		c->c_tag = wl_csv_col(row, "tag_size_m");
		for (int k = 0; k < 4; k++)
			c->c_hsv[k] = wl_csv_col(row, hsv_cols[k]);
		return WL_OK;
	}
	if ((st = wl_csv_get_long(row, c->c_id, "id", &id, err)) != WL_OK)
		return st;
	if (id < 0)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: id %ld is negative: give the tag id or a number >= 0", row->path,
		                  row->line, id);
	for (int i = 0; i < c->o->n_robots; i++)
		if (c->o->robots[i].id == id)
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: id %ld is listed twice: one row per robot", row->path,
			                  row->line, id);
	if (!(r = wl_track_robot(c->o, (int)id)))
		return wl_err_set(err, WL_ELIMIT, "%s:%ld: more than %d robots", row->path, row->line,
		                  WL_TRACK_MAX_ROBOTS);
	if (!wl_csv_empty(row, c->c_plane) &&
	    (st = wl_csv_get_double(row, c->c_plane, "plane_height_m", &r->plane_height_m, err)) != WL_OK)
		return st;
	if (!wl_csv_empty(row, c->c_tol) && (st = wl_csv_get_double(row, c->c_tol, "plane_height_tol_m",
	                                                            &r->plane_height_tol_m, err)) != WL_OK)
		return st;
	if (!wl_csv_empty(row, c->c_tol) && !(r->plane_height_tol_m >= 0 && r->plane_height_tol_m < 1))
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: plane_height_tol_m %g is not a tolerance: give metres, e.g. 0.003",
		                  row->path, row->line, r->plane_height_tol_m);
	if (!wl_csv_empty(row, c->c_off) && (st = wl_csv_get_double(row, c->c_off, "heading_offset_rad",
	                                                            &r->heading_offset_rad, err)) != WL_OK)
		return st;
	if (!wl_csv_empty(row, c->c_diam) &&
	    (st = wl_csv_get_double(row, c->c_diam, "body_diameter_m", &r->body_diameter_m, err)) != WL_OK)
		return st;
	if (!wl_csv_empty(row, c->c_tag) &&
	    (st = wl_csv_get_double(row, c->c_tag, "tag_size_m", &r->tag_size_m, err)) != WL_OK)
		return st;
	if (!(r->tag_size_m > 0) && !isnan(r->tag_size_m))
		return wl_err_set(err, WL_EFORMAT, "%s:%ld: tag_size_m must be a positive number of metres",
		                  row->path, row->line);
	for (int k = 0; k < 4; k++) {
		wl_hsv_range *hr = k < 2 ? &r->front : &r->back;
		int *dst = (k % 2) ? hr->hi : hr->lo;
		if (wl_csv_empty(row, c->c_hsv[k]))
			continue;
		if (!wl_track_parse_hsv(row->fields[c->c_hsv[k]], dst))
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: column '%s': '%s' is not h,s,v: give hue 0-179, "
			                  "saturation and value 0-255",
			                  row->path, row->line, hsv_cols[k], row->fields[c->c_hsv[k]]);
		hr->set |= (k % 2) ? 2 : 1;
	}
	for (int k = 0; k < 2; k++) {
		wl_hsv_range *hr = k == 0 ? &r->front : &r->back;
		if (hr->set && hr->set != 3)
			return wl_err_set(err, WL_EFORMAT, "%s:%ld: %s cap has only one of lo/hi: give both",
			                  row->path, row->line, k == 0 ? "front" : "back");
		hr->set = hr->set == 3;
	}
	if (r->back.set && !r->front.set)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: back cap without a front cap: give front_hsv_lo/hi", row->path,
		                  row->line);
	return WL_OK;
}

wl_status wl_track_load_robots(const char *path, wl_track_opts *o, wl_err *err)
{
	robots_ctx c = {.o = o};
	wl_status st = wl_csv_read(path, robots_row, &c, err);
	if (st != WL_OK)
		return st;
	if (o->n_robots == 0)
		return wl_err_set(err, WL_EFORMAT, "%s: no robots listed: add rows id,...", path);
	o->restrict_ids = 1;
	snprintf(o->robots_path, sizeof o->robots_path, "%s", path);
	return WL_OK;
}

wl_status wl_track_opts_check(const wl_track_opts *o, wl_err *err)
{
	if (o->mode != WL_TRACK_TAG)
		return WL_OK;
	for (int i = 0; i < o->n_robots; i++)
		if (o->robots[i].front.set || o->robots[i].back.set)
			return wl_err_set(
			        err, WL_EINVAL,
			        "%s: robot %d has colour ranges (front_hsv_lo/hi) but the mode is tag: "
			        "add --mode colour (in a batch, or a 'mode' column set to colour in the "
			        "manifest), or give a ROBOTS.csv without colours to track tags",
			        o->robots_path[0] ? o->robots_path : "ROBOTS.csv", o->robots[i].id);
	return WL_OK;
}
