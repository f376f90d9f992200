/*
 * raw.c: RAW.csv grouped per robot for the clean stage (see raw.h).  The
 * file is streamed through formats/raw.h, which checks each row; this file
 * keeps the rows per robot id and checks their order.
 */
#define _POSIX_C_SOURCE 200809L
#include "clean/raw.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/sha256.h"
#include "formats/raw.h"

static wl_clean_raw_track *find_track(wl_clean_raw *raw, long id, long line, wl_err *err)
{
	wl_clean_raw_track *t;
	for (size_t i = raw->ntracks; i-- > 0;)
		if (raw->tracks[i].id == id)
			return &raw->tracks[i];
	if (raw->ntracks >= WL_CLEAN_MAX_ROBOTS) {
		wl_err_set(err, WL_ELIMIT, "%s:%ld: more than %d robot ids: is 'id' the robot column?",
		           raw->path, line, WL_CLEAN_MAX_ROBOTS);
		return NULL;
	}
	t = realloc(raw->tracks, (raw->ntracks + 1) * sizeof *t);
	if (!t) {
		wl_err_set(err, WL_ENOMEM, "%s:%ld: out of memory", raw->path, line);
		return NULL;
	}
	raw->tracks = t;
	t = &raw->tracks[raw->ntracks++];
	memset(t, 0, sizeof *t);
	t->id = id;
	return t;
}

static wl_status on_row(const wl_raw_row *r, void *ctx, wl_err *err)
{
	wl_clean_raw *raw = ctx;
	wl_clean_raw_sample s;
	wl_clean_raw_track *tr;
	memset(&s, 0, sizeof s);
	s.line = r->line;
	s.t_s = r->t_s;
	s.frame = (long)r->frame;
	s.x_m = s.y_m = s.heading_rad = NAN;
	s.u_px = s.v_px = s.size_px = NAN;
	s.t_meas_s = r->t_detect_s; /* NaN when lost or not given */
	if (r->status == WL_RAW_OK || r->status == WL_RAW_HELD) {
		s.x_m = r->x_m;
		s.y_m = r->y_m;
		s.u_px = r->u_px;
		s.v_px = r->v_px;
		s.size_px = r->size_px;
		s.has_pos = 1;
		s.held = r->status == WL_RAW_HELD;
		if (!isnan(r->heading_rad)) {
			s.heading_rad = r->heading_rad;
			s.has_heading = 1;
		}
	}
	if (!(tr = find_track(raw, r->id, r->line, err)))
		return err ? err->code : WL_ENOMEM;
	/* the time of the pose: t_detect_s, or t_s shifted like the last pose */
	if (isnan(s.t_meas_s))
		s.t_meas_s = s.t_s + tr->t_offset_s;
	else if (s.has_pos)
		tr->t_offset_s = s.t_meas_s - s.t_s;
	if (tr->n > 0) {
		const wl_clean_raw_sample *p = &tr->s[tr->n - 1];
		if (s.frame == p->frame)
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: frame %ld of robot %ld appears twice (also on line %ld): "
			                  "keep one row per frame and robot",
			                  raw->path, r->line, s.frame, r->id, p->line);
		if (s.frame < p->frame)
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: frame %ld of robot %ld comes after frame %ld (line %ld): "
			                  "rows must be in frame order",
			                  raw->path, r->line, s.frame, r->id, p->frame, p->line);
		if (!(s.t_s > p->t_s))
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: time t_s %.6f of robot %ld is not after %.6f (line %ld): "
			                  "times must increase strictly",
			                  raw->path, r->line, s.t_s, r->id, p->t_s, p->line);
		if (!(s.t_meas_s > p->t_meas_s))
			return wl_err_set(
			        err, WL_EFORMAT,
			        "%s:%ld: time t_detect_s %.6f of robot %ld is not after %.6f (line %ld): "
			        "the rolling-shutter times must increase strictly: check the readout given "
			        "to track",
			        raw->path, r->line, s.t_meas_s, r->id, p->t_meas_s, p->line);
	}
	if (tr->n == tr->cap) {
		size_t cap = tr->cap ? 2 * tr->cap : 256;
		wl_clean_raw_sample *ns = realloc(tr->s, cap * sizeof *ns);
		if (!ns)
			return wl_err_set(err, WL_ENOMEM, "%s:%ld: out of memory", raw->path, r->line);
		tr->s = ns;
		tr->cap = cap;
	}
	tr->s[tr->n++] = s;
	raw->nrows++;
	return WL_OK;
}

static wl_clean_raw *raw_new(const char *name)
{
	wl_clean_raw *raw = calloc(1, sizeof *raw);
	if (raw)
		wl_rawside_init(&raw->camera);
	if (raw && !(raw->path = strdup(name))) {
		free(raw);
		raw = NULL;
	}
	return raw;
}

static wl_status finish(wl_clean_raw *raw, wl_status st, wl_clean_raw **out)
{
	if (st) {
		wl_clean_raw_destroy(raw);
		return st;
	}
	*out = raw;
	return WL_OK;
}

wl_status wl_clean_raw_read(const char *path, wl_clean_raw **out, wl_err *err)
{
	wl_clean_raw *raw;
	wl_status st;
	*out = NULL;
	if (!(raw = raw_new(path)))
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
	st = wl_raw_read(path, on_row, raw, err);
	if (!st)
		st = wl_sha256_file(path, raw->sha256_hex, &raw->bytes, err);
	if (!st)
		st = wl_rawside_read(path, &raw->camera, &raw->camera_found, err);
	return finish(raw, st, out);
}

wl_status wl_clean_raw_read_mem(const char *name, const char *data, size_t len, wl_clean_raw **out,
                                wl_err *err)
{
	wl_clean_raw *raw;
	wl_status st;
	wl_sha256 h;
	*out = NULL;
	if (!(raw = raw_new(name)))
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", name);
	st = wl_raw_read_mem(name, data, len, on_row, raw, err);
	wl_sha256_init(&h);
	wl_sha256_update(&h, data, len);
	wl_sha256_final(&h, raw->sha256_hex);
	raw->bytes = len;
	return finish(raw, st, out);
}

void wl_clean_raw_destroy(wl_clean_raw *raw)
{
	if (!raw)
		return;
	for (size_t i = 0; i < raw->ntracks; i++)
		free(raw->tracks[i].s);
	free(raw->tracks);
	free(raw->path);
	free(raw);
}
