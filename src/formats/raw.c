/*
 * raw.c: RAW.csv (see raw.h): the column table, the streaming writer and the
 * streaming reader.
 */
#include "formats/raw.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/afile.h"
#include "core/csvio.h"
#include "formats/format.h"

static const wl_format RAW = {"RAW.csv", NULL, 1, "wakeline track"};

/* The columns, in file order. */
enum { C_T, C_FRAME, C_ID, C_U, C_V, C_X, C_Y, C_H, C_STATUS, C_MARGIN, C_SIZE, C_HS, C_N };
static const char *const COLS[] = {"t_s", "frame",       "id",     "u_px",   "v_px",    "x_m",
                                   "y_m", "heading_rad", "status", "margin", "size_px", "heading_source",
                                   NULL};
/* What a reader needs. */
static const char *const REQUIRED[] = {"t_s", "frame", "id", "x_m", "y_m", "heading_rad", "status", NULL};

static const char *const STATUS[] = {"lost", "ok"};
static const char *const SOURCES[] = {"", "tag", "caps", "motion"};

const char *wl_heading_source_name(wl_heading_source s)
{
	return (unsigned)s < sizeof SOURCES / sizeof SOURCES[0] ? SOURCES[s] : "";
}

/* ---- writing ---- */

struct wl_raw_writer {
	wl_afile *af; /* NULL when writing to the caller's stream */
	wl_csv_writer w;
};

wl_status wl_raw_open_fp(FILE *fp, wl_raw_writer **out, wl_err *err)
{
	wl_raw_writer *w = calloc(1, sizeof *w);
	*out = NULL;
	if (!w)
		return wl_err_set(err, WL_ENOMEM, "out of memory opening RAW.csv");
	wl_csvw_init(&w->w, fp);
	wl_csvw_header(&w->w, COLS);
	*out = w;
	return WL_OK;
}

wl_status wl_raw_open(const char *path, wl_raw_writer **out, wl_err *err)
{
	wl_raw_writer *w = calloc(1, sizeof *w);
	wl_status st;
	*out = NULL;
	if (!w)
		return wl_err_set(err, WL_ENOMEM, "out of memory opening '%s'", path);
	if ((st = wl_afile_open(path, &w->af, err)) != WL_OK) {
		free(w);
		return st;
	}
	wl_csvw_init(&w->w, wl_afile_fp(w->af));
	wl_csvw_header(&w->w, COLS);
	*out = w;
	return WL_OK;
}

void wl_raw_put(wl_raw_writer *w, const wl_raw_row *r)
{
	wl_csvw_num(&w->w, r->t_s, 6);
	wl_csvw_int(&w->w, r->frame);
	wl_csvw_int(&w->w, r->id);
	if (r->status == WL_RAW_OK) {
		wl_csvw_num(&w->w, r->u_px, 3);
		wl_csvw_num(&w->w, r->v_px, 3);
		wl_csvw_num(&w->w, r->x_m, 6);
		wl_csvw_num(&w->w, r->y_m, 6);
		wl_csvw_num(&w->w, r->heading_rad, 6); /* NaN -> empty */
		wl_csvw_str(&w->w, STATUS[WL_RAW_OK]);
		wl_csvw_num(&w->w, r->margin, 2);
		wl_csvw_num(&w->w, r->size_px, 2);
		wl_csvw_str(&w->w, isnan(r->heading_rad) ? "" : wl_heading_source_name(r->heading_source));
	} else {
		for (int k = C_U; k < C_STATUS; k++)
			wl_csvw_empty(&w->w);
		wl_csvw_str(&w->w, STATUS[WL_RAW_LOST]);
		for (int k = C_MARGIN; k < C_N; k++)
			wl_csvw_empty(&w->w);
	}
	wl_csvw_end(&w->w);
}

wl_status wl_raw_commit(wl_raw_writer *w, wl_err *err)
{
	wl_status st;
	if (!w)
		return WL_OK;
	st = w->af ? wl_afile_commit(w->af, err) : WL_OK;
	free(w);
	return st;
}

void wl_raw_abort(wl_raw_writer *w)
{
	if (!w)
		return;
	if (w->af)
		wl_afile_abort(w->af);
	free(w);
}

/* ---- reading ---- */

typedef struct {
	wl_raw_row_fn fn;
	void *ctx;
	int col[C_N];
	int have_header;
	long rows;
} rctx;

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

/* An optional number cell: NaN when the column is absent or the cell empty. */
static wl_status opt_num(const wl_csv_row *row, int col, int which, double *out, wl_err *err)
{
	*out = NAN;
	if (col < 0 || wl_csv_empty(row, col))
		return WL_OK;
	return wl_csv_get_double(row, col, COLS[which], out, err);
}

static wl_status parse_row(const rctx *c, const wl_csv_row *row, wl_raw_row *r, wl_err *err)
{
	const char *cell;
	long frame;
	wl_status st;
	memset(r, 0, sizeof *r);
	r->line = row->line;
	r->u_px = r->v_px = r->x_m = r->y_m = r->heading_rad = r->margin = r->size_px = NAN;
	if ((st = wl_csv_get_double(row, c->col[C_T], COLS[C_T], &r->t_s, err)) ||
	    (st = wl_csv_get_long(row, c->col[C_FRAME], COLS[C_FRAME], &frame, err)) ||
	    (st = wl_csv_get_long(row, c->col[C_ID], COLS[C_ID], &r->id, err)))
		return st;
	r->frame = frame;
	if ((size_t)c->col[C_STATUS] >= row->nfields)
		return wl_err_set(err, WL_EFORMAT, "%s:%ld: column '%s' is missing on this row (%zu cells)",
		                  row->path, row->line, COLS[C_STATUS], row->nfields);
	cell = row->fields[c->col[C_STATUS]];
	if (word_is(cell, STATUS[WL_RAW_LOST]))
		return WL_OK;
	if (!word_is(cell, STATUS[WL_RAW_OK]))
		return wl_err_set(err, WL_EFORMAT, "%s:%ld: column '%s': '%.40s' is neither '%s' nor '%s'",
		                  row->path, row->line, COLS[C_STATUS], cell, STATUS[WL_RAW_OK],
		                  STATUS[WL_RAW_LOST]);
	r->status = WL_RAW_OK;
	if ((st = wl_csv_get_double(row, c->col[C_X], COLS[C_X], &r->x_m, err)) ||
	    (st = wl_csv_get_double(row, c->col[C_Y], COLS[C_Y], &r->y_m, err)) ||
	    (st = opt_num(row, c->col[C_H], C_H, &r->heading_rad, err)) ||
	    (st = opt_num(row, c->col[C_U], C_U, &r->u_px, err)) ||
	    (st = opt_num(row, c->col[C_V], C_V, &r->v_px, err)) ||
	    (st = opt_num(row, c->col[C_MARGIN], C_MARGIN, &r->margin, err)) ||
	    (st = opt_num(row, c->col[C_SIZE], C_SIZE, &r->size_px, err)))
		return st;
	if (c->col[C_HS] >= 0 && !wl_csv_empty(row, c->col[C_HS])) {
		size_t k;
		cell = row->fields[c->col[C_HS]];
		for (k = 1; k < sizeof SOURCES / sizeof SOURCES[0] && !word_is(cell, SOURCES[k]); k++)
			;
		if (k == sizeof SOURCES / sizeof SOURCES[0])
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: column '%s': '%.40s' is not one of tag, caps, motion",
			                  row->path, row->line, COLS[C_HS], cell);
		r->heading_source = (wl_heading_source)k;
	}
	return WL_OK;
}

static wl_status on_row(const wl_csv_row *row, void *vctx, wl_err *err)
{
	rctx *c = vctx;
	wl_raw_row r;
	wl_status st;
	if (!c->have_header) {
		if ((st = wl_format_check_header(&RAW, row, REQUIRED, err)))
			return st;
		for (int i = 0; i < C_N; i++)
			c->col[i] = wl_csv_col(row, COLS[i]);
		c->have_header = 1;
		return WL_OK;
	}
	if ((st = parse_row(c, row, &r, err)))
		return st;
	c->rows++;
	return c->fn(&r, c->ctx, err);
}

static wl_status finish(const rctx *c, wl_status st, const char *name, wl_err *err)
{
	if (!st && !c->have_header)
		return wl_err_set(err, WL_EFORMAT, "%s: the file is empty: expected a RAW.csv header", name);
	if (!st && c->rows == 0)
		return wl_err_set(err, WL_EFORMAT, "%s: no data rows after the header", name);
	return st;
}

wl_status wl_raw_read(const char *path, wl_raw_row_fn fn, void *ctx, wl_err *err)
{
	rctx c = {fn, ctx, {0}, 0, 0};
	return finish(&c, wl_csv_read(path, on_row, &c, err), path, err);
}

wl_status wl_raw_read_mem(const char *name, const char *data, size_t len, wl_raw_row_fn fn, void *ctx,
                          wl_err *err)
{
	rctx c = {fn, ctx, {0}, 0, 0};
	return finish(&c, wl_csv_read_mem(name, data, len, on_row, &c, err), name, err);
}
