/*
 * manifest.c: the sweep's manifest CSV (see manifest.h): the `clip` column,
 * the option columns and their values, and any parameter columns.
 */
#define _XOPEN_SOURCE 700
#include "formats/manifest.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/csvio.h"

static const char *const K_CLIP = "clip";

/* The option columns. */
enum { O_CAL, O_ROBOTS, O_MODE, O_FAMILY, O_PLANE, O_BODY, O_TRIM, O_SMOOTHER, O_COMMANDED, OPT_N };
static const char *const OPT_COLS[OPT_N] = {"cal",    "robots",         "mode",
                                            "family", "plane_height_m", "body_diameter_m",
                                            "trim",   "smoother",       "commanded_period_s"};

typedef struct {
	wl_manifest *m;
	size_t cap;
	int col[OPT_N];
} mctx;

void wl_manifest_init(wl_manifest *m)
{
	memset(m, 0, sizeof *m);
	m->c_clip = -1;
}

void wl_manifest_release(wl_manifest *m)
{
	size_t i, j;
	for (i = 0; i < m->nrows; i++) {
		free(m->rows[i].clip);
		free(m->rows[i].cal);
		free(m->rows[i].robots);
		for (j = 0; m->rows[i].values && j < m->ncols; j++)
			free(m->rows[i].values[j]);
		free(m->rows[i].values);
	}
	for (i = 0; i < m->ncols; i++)
		free(m->cols[i]);
	free(m->cols);
	free(m->rows);
	free(m->path);
	wl_manifest_init(m);
}

static char *trimdup(const char *s)
{
	size_t n;
	while (*s == ' ' || *s == '\t')
		s++;
	n = strlen(s);
	while (n && (s[n - 1] == ' ' || s[n - 1] == '\t' || s[n - 1] == '\r'))
		n--;
	return strndup(s, n);
}

static const char *strip_dot(const char *s)
{
	while (s[0] == '.' && s[1] == '/')
		s += 2;
	return s;
}

static wl_status on_header(const wl_csv_row *row, mctx *c, wl_err *err)
{
	wl_manifest *m = c->m;
	size_t i, j;
	m->cols = calloc(row->nfields ? row->nfields : 1, sizeof *m->cols);
	if (!m->cols)
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
	for (i = 0; i < row->nfields; i++) {
		m->cols[i] = trimdup(row->fields[i]);
		if (!m->cols[i])
			return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
		m->ncols++;
		if (!m->cols[i][0])
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: column %zu has no name: name every column", row->path,
			                  row->line, i + 1);
		for (j = 0; j < i; j++)
			if (strcmp(m->cols[j], m->cols[i]) == 0)
				return wl_err_set(err, WL_EFORMAT,
				                  "%s:%ld: column '%s' appears twice: rename one", row->path,
				                  row->line, m->cols[i]);
	}
	m->c_clip = wl_csv_col(row, K_CLIP);
	for (i = 0; i < OPT_N; i++)
		c->col[i] = wl_csv_col(row, OPT_COLS[i]);
	if (m->c_clip < 0)
		return wl_err_set(
		        err, WL_EFORMAT,
		        "%s:%ld: no '%s' column: the first line must name the columns, one of them '%s'",
		        row->path, row->line, K_CLIP, K_CLIP);
	return WL_OK;
}

/* A path cell relative to the manifest's folder unless absolute. */
static char *resolve(const char *manifest, const char *cell)
{
	const char *slash = strrchr(manifest, '/');
	size_t n;
	char *s;
	if (cell[0] == '/' || !slash)
		return strdup(cell);
	n = (size_t)(slash - manifest) + 1 + strlen(cell) + 1;
	if ((s = malloc(n)))
		snprintf(s, n, "%.*s/%s", (int)(slash - manifest), manifest, cell);
	return s;
}

static wl_status bad_cell(const wl_csv_row *row, int which, const char *v, const char *want, wl_err *err)
{
	return wl_err_set(err, WL_EFORMAT,
	                  "%s:%ld: column '%s': '%.40s' is not %s: fix the cell or leave it empty", row->path,
	                  row->line, OPT_COLS[which], v, want);
}

static wl_status num_cell(const wl_csv_row *row, int which, const char *v, int positive, double *out,
                          wl_err *err)
{
	if (!wl_parse_double(v, out) || (positive && !(*out > 0)))
		return bad_cell(row, which, v, positive ? "a number > 0" : "a number", err);
	return WL_OK;
}

/* The options of a row, from its (trimmed) cells. */
static wl_status read_opts(const mctx *c, const wl_csv_row *row, wl_manifest_row *r, wl_err *err)
{
	wl_manifest_opts *o = &r->opts;
	const char *v[OPT_N];
	wl_status st;
	o->mode = WL_MF_MODE_UNSET;
	o->trim = WL_MF_TRIM_UNSET;
	o->smoother = WL_MF_SMOOTHER_UNSET;
	o->plane_height_m = o->body_diameter_m = o->commanded_period_s = o->trim_s = NAN;
	for (int i = 0; i < OPT_N; i++)
		v[i] = c->col[i] >= 0 && r->values[c->col[i]][0] ? r->values[c->col[i]] : NULL;
	if ((v[O_CAL] && !(r->cal = resolve(c->m->path, v[O_CAL]))) ||
	    (v[O_ROBOTS] && !(r->robots = resolve(c->m->path, v[O_ROBOTS]))))
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
	o->cal = r->cal;
	o->robots = r->robots;
	o->family = v[O_FAMILY];
	if (v[O_MODE]) {
		if (strcmp(v[O_MODE], "tag") == 0)
			o->mode = WL_MF_MODE_TAG;
		else if (strcmp(v[O_MODE], "colour") == 0 || strcmp(v[O_MODE], "color") == 0)
			o->mode = WL_MF_MODE_COLOUR;
		else
			return bad_cell(row, O_MODE, v[O_MODE], "tag or colour", err);
	}
	if (v[O_SMOOTHER]) {
		if (strcmp(v[O_SMOOTHER], "rts") == 0)
			o->smoother = WL_MF_SMOOTHER_RTS;
		else if (strcmp(v[O_SMOOTHER], "sg") == 0)
			o->smoother = WL_MF_SMOOTHER_SG;
		else
			return bad_cell(row, O_SMOOTHER, v[O_SMOOTHER], "rts or sg", err);
	}
	if (v[O_TRIM]) {
		if (strcmp(v[O_TRIM], "auto") == 0)
			o->trim = WL_MF_TRIM_AUTO;
		else if (strcmp(v[O_TRIM], "none") == 0)
			o->trim = WL_MF_TRIM_NONE;
		else if (wl_parse_double(v[O_TRIM], &o->trim_s) && o->trim_s >= 0)
			o->trim = WL_MF_TRIM_FIXED;
		else
			return bad_cell(row, O_TRIM, v[O_TRIM], "auto, none or seconds >= 0", err);
	}
	if ((v[O_PLANE] && (st = num_cell(row, O_PLANE, v[O_PLANE], 0, &o->plane_height_m, err))) ||
	    (v[O_BODY] && (st = num_cell(row, O_BODY, v[O_BODY], 1, &o->body_diameter_m, err))) ||
	    (v[O_COMMANDED] &&
	     (st = num_cell(row, O_COMMANDED, v[O_COMMANDED], 1, &o->commanded_period_s, err))))
		return st;
	if (o->plane_height_m < -10 || o->plane_height_m > 10)
		return bad_cell(row, O_PLANE, v[O_PLANE], "a height from -10 to 10 m", err);
	return WL_OK;
}

static wl_status on_mrow(const wl_csv_row *row, void *ctx, wl_err *err)
{
	mctx *c = ctx;
	wl_manifest *m = c->m;
	wl_manifest_row *r;
	const wl_manifest_row *prev;
	size_t i;

	if (row->index == 0)
		return on_header(row, c, err);
	if (row->nfields != m->ncols)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: row has %zu cells but the header has %zu: fix the row", row->path,
		                  row->line, row->nfields, m->ncols);
	{
		char *clip = trimdup(strip_dot(row->fields[m->c_clip]));
		if (!clip)
			return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
		if (!clip[0]) {
			free(clip);
			return wl_err_set(err, WL_EFORMAT, "%s:%ld: empty '%s' cell: name the clip file",
			                  row->path, row->line, K_CLIP);
		}
		prev = wl_manifest_find(m, clip);
		if (prev) {
			long pl = prev->line;
			wl_err_set(err, WL_EFORMAT,
			           "%s:%ld: clip '%s' is listed again (first on line %ld): keep one row per "
			           "clip",
			           row->path, row->line, clip, pl);
			free(clip);
			return WL_EFORMAT;
		}
		if (m->nrows == c->cap) {
			size_t nc = c->cap ? 2 * c->cap : 16;
			wl_manifest_row *nr = realloc(m->rows, nc * sizeof *nr);
			if (!nr) {
				free(clip);
				return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
			}
			m->rows = nr;
			c->cap = nc;
		}
		r = &m->rows[m->nrows++];
		memset(r, 0, sizeof *r);
		r->clip = clip;
		r->line = row->line;
	}
	r->values = calloc(m->ncols, sizeof *r->values);
	if (!r->values)
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
	for (i = 0; i < m->ncols; i++) {
		r->values[i] = trimdup(row->fields[i]);
		if (!r->values[i])
			return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
	}
	return read_opts(c, row, r, err);
}

wl_status wl_manifest_load(const char *path, wl_manifest *m, wl_err *err)
{
	mctx c = {m, 0, {0}};
	wl_status s;
	wl_manifest_init(m);
	m->path = strdup(path);
	if (!m->path)
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
	s = wl_csv_read(path, on_mrow, &c, err);
	if (!s && m->ncols == 0)
		s = wl_err_set(
		        err, WL_EFORMAT,
		        "%s:1: empty manifest: the first line must name the columns, one of them 'clip'",
		        path);
	if (s)
		wl_manifest_release(m);
	return s;
}

const wl_manifest_row *wl_manifest_find(const wl_manifest *m, const char *clip)
{
	size_t i;
	for (i = 0; m && i < m->nrows; i++)
		if (strcmp(m->rows[i].clip, clip) == 0)
			return &m->rows[i];
	return NULL;
}

int wl_manifest_is_clip_col(const wl_manifest *m, size_t i)
{
	return (int)i == m->c_clip;
}
