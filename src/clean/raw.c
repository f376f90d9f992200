/*
 * raw.c: the RAW.csv reader of the clean stage.  Streams the table through
 * core/csvio.h, validates every row (columns, numbers, status words, times
 * and frames strictly increasing per robot) and keeps the rows per robot id.
 */
#define _POSIX_C_SOURCE 200809L
#include "clean/raw.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/csvio.h"
#include "core/sha256.h"

enum { C_T, C_FRAME, C_ID, C_X, C_Y, C_H, C_STATUS, C_N };
static const char *const REQUIRED[] = {"t_s", "frame", "id", "x_m", "y_m", "heading_rad", "status", NULL};

typedef struct {
	wl_clean_raw *raw;
	int col[C_N];
	int have_header;
} rctx;

static wl_clean_raw_track *find_track(wl_clean_raw *raw, long id, const wl_csv_row *row, wl_err *err)
{
	wl_clean_raw_track *t;
	for (size_t i = raw->ntracks; i-- > 0;)
		if (raw->tracks[i].id == id)
			return &raw->tracks[i];
	if (raw->ntracks >= WL_CLEAN_MAX_ROBOTS) {
		wl_err_set(err, WL_ELIMIT, "%s:%ld: more than %d robot ids: is 'id' the robot column?",
		           row->path, row->line, WL_CLEAN_MAX_ROBOTS);
		return NULL;
	}
	t = realloc(raw->tracks, (raw->ntracks + 1) * sizeof *t);
	if (!t) {
		wl_err_set(err, WL_ENOMEM, "%s:%ld: out of memory", row->path, row->line);
		return NULL;
	}
	raw->tracks = t;
	t = &raw->tracks[raw->ntracks++];
	memset(t, 0, sizeof *t);
	t->id = id;
	return t;
}

/* The cell equals w, spaces and a trailing CR aside. */
static int word_is(const char *cell, const char *w)
{
	size_t n = strlen(w);
	while (*cell == ' ' || *cell == '\t')
		cell++;
	if (strncmp(cell, w, n) != 0)
		return 0;
	for (cell += n; *cell == ' ' || *cell == '\t' || *cell == '\r'; cell++)
		;
	return *cell == '\0';
}

static wl_status parse_row(rctx *c, const wl_csv_row *row, wl_clean_raw_sample *s, long *id, wl_err *err)
{
	const char *status;
	wl_status st;
	memset(s, 0, sizeof *s);
	s->line = row->line;
	s->x_m = s->y_m = s->heading_rad = NAN;
	if ((st = wl_csv_get_double(row, c->col[C_T], "t_s", &s->t_s, err)) ||
	    (st = wl_csv_get_long(row, c->col[C_FRAME], "frame", &s->frame, err)) ||
	    (st = wl_csv_get_long(row, c->col[C_ID], "id", id, err)))
		return st;
	if ((size_t)c->col[C_STATUS] >= row->nfields)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: column 'status' is missing on this row (%zu cells)", row->path,
		                  row->line, row->nfields);
	status = row->fields[c->col[C_STATUS]];
	if (word_is(status, "lost"))
		return WL_OK;
	if (!word_is(status, "ok"))
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: column 'status': '%.40s' is neither 'ok' nor 'lost'", row->path,
		                  row->line, status);
	if ((st = wl_csv_get_double(row, c->col[C_X], "x_m", &s->x_m, err)) ||
	    (st = wl_csv_get_double(row, c->col[C_Y], "y_m", &s->y_m, err)))
		return st;
	s->has_pos = 1;
	if (!wl_csv_empty(row, c->col[C_H])) {
		if ((st = wl_csv_get_double(row, c->col[C_H], "heading_rad", &s->heading_rad, err)))
			return st;
		s->has_heading = 1;
	}
	return WL_OK;
}

static wl_status on_row(const wl_csv_row *row, void *ctx, wl_err *err)
{
	rctx *c = ctx;
	wl_clean_raw_sample s;
	wl_clean_raw_track *tr;
	long id;
	wl_status st;
	if (!c->have_header) {
		if ((st = wl_csv_require(row, REQUIRED, err)))
			return st;
		for (int i = 0; i < C_N; i++)
			c->col[i] = wl_csv_col(row, REQUIRED[i]);
		c->have_header = 1;
		return WL_OK;
	}
	if ((st = parse_row(c, row, &s, &id, err)))
		return st;
	if (!(tr = find_track(c->raw, id, row, err)))
		return err ? err->code : WL_ENOMEM;
	if (tr->n > 0) {
		const wl_clean_raw_sample *p = &tr->s[tr->n - 1];
		if (s.frame == p->frame)
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: frame %ld of robot %ld appears twice (also on line %ld): "
			                  "keep one row per frame and robot",
			                  row->path, row->line, s.frame, id, p->line);
		if (s.frame < p->frame)
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: frame %ld of robot %ld comes after frame %ld (line %ld): "
			                  "rows must be in frame order",
			                  row->path, row->line, s.frame, id, p->frame, p->line);
		if (!(s.t_s > p->t_s))
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: time t_s %.6f of robot %ld is not after %.6f (line %ld): "
			                  "times must increase strictly",
			                  row->path, row->line, s.t_s, id, p->t_s, p->line);
	}
	if (tr->n == tr->cap) {
		size_t cap = tr->cap ? 2 * tr->cap : 256;
		wl_clean_raw_sample *ns = realloc(tr->s, cap * sizeof *ns);
		if (!ns)
			return wl_err_set(err, WL_ENOMEM, "%s:%ld: out of memory", row->path, row->line);
		tr->s = ns;
		tr->cap = cap;
	}
	tr->s[tr->n++] = s;
	c->raw->nrows++;
	return WL_OK;
}

static wl_status finish(rctx *c, wl_status st, const char *name, wl_clean_raw **out, wl_err *err)
{
	if (!st && !c->have_header)
		st = wl_err_set(err, WL_EFORMAT, "%s: the file is empty: expected a RAW.csv header", name);
	if (!st && c->raw->nrows == 0)
		st = wl_err_set(err, WL_EFORMAT, "%s: no data rows after the header", name);
	if (st) {
		wl_clean_raw_destroy(c->raw);
		return st;
	}
	*out = c->raw;
	return WL_OK;
}

static wl_clean_raw *raw_new(const char *name)
{
	wl_clean_raw *raw = calloc(1, sizeof *raw);
	if (raw && !(raw->path = strdup(name))) {
		free(raw);
		raw = NULL;
	}
	return raw;
}

wl_status wl_clean_raw_read(const char *path, wl_clean_raw **out, wl_err *err)
{
	rctx c = {0};
	wl_status st;
	*out = NULL;
	if (!(c.raw = raw_new(path)))
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
	st = wl_csv_read(path, on_row, &c, err);
	if (!st)
		st = wl_sha256_file(path, c.raw->sha256_hex, &c.raw->bytes, err);
	return finish(&c, st, path, out, err);
}

wl_status wl_clean_raw_read_mem(const char *name, const char *data, size_t len, wl_clean_raw **out,
                                wl_err *err)
{
	rctx c = {0};
	wl_status st;
	wl_sha256 h;
	*out = NULL;
	if (!(c.raw = raw_new(name)))
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", name);
	st = wl_csv_read_mem(name, data, len, on_row, &c, err);
	wl_sha256_init(&h);
	wl_sha256_update(&h, data, len);
	wl_sha256_final(&h, c.raw->sha256_hex);
	c.raw->bytes = len;
	return finish(&c, st, name, out, err);
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
