/*
 * csvio.h: CSV tables on libcsv, with line numbers for error messages, and
 * locale-independent number formatting for every file wakeline writes.
 *
 * Reading streams one row at a time through a callback; nothing but the
 * current row is kept.  Rows whose first cell starts with '#' and empty
 * lines are skipped.  Limits (WL_ELIMIT): CSV_MAX_LINE bytes per physical
 * line, CSV_MAX_FIELDS cells per row.
 */
#ifndef WL_CSVIO_H
#define WL_CSVIO_H

#include <stdio.h>
#include <stddef.h>

#include "core/err.h"

#define WL_CSV_MAX_LINE 65536
#define WL_CSV_MAX_FIELDS 256

typedef struct {
	const char *path; /* the file, for messages */
	long line;        /* 1-based line on which this row starts */
	long index;       /* 0-based row index (the header is row 0) */
	size_t nfields;
	char **fields; /* NUL-terminated cells, borrowed until the callback returns */
} wl_csv_row;

/* Called for each row; a non-WL_OK return stops reading and is returned. */
typedef wl_status (*wl_csv_row_fn)(const wl_csv_row *row, void *ctx, wl_err *err);

/* Reads `path` (or standard input for "-"), calling fn for every row. */
wl_status wl_csv_read(const char *path, wl_csv_row_fn fn, void *ctx, wl_err *err);

/* Same over a buffer in memory (used by fuzz targets and tests). */
wl_status wl_csv_read_mem(const char *name, const char *data, size_t len, wl_csv_row_fn fn, void *ctx,
                          wl_err *err);

/* Column index of `name` in a header row, or -1.  Names are compared exactly
 * after trimming spaces. */
int wl_csv_col(const wl_csv_row *header, const char *name);

/* Checks that a header has every name in `required` (NULL-terminated);
 * the error lists the first missing one and the columns that were found. */
wl_status wl_csv_require(const wl_csv_row *header, const char *const *required, wl_err *err);

/* True when column col is absent from this row or its cell is empty. */
int wl_csv_empty(const wl_csv_row *row, int col);

/* Parses a cell as a finite number / a whole number.  Errors read
 * "file:line: column 'name': 'abc' is not a number". */
wl_status wl_csv_get_double(const wl_csv_row *row, int col, const char *name, double *out, wl_err *err);
wl_status wl_csv_get_long(const wl_csv_row *row, int col, const char *name, long *out, wl_err *err);

/* Strict number parsing of a whole string (no trailing junk), "C" locale. */
int wl_parse_double(const char *s, double *out);
int wl_parse_long(const char *s, long *out);

/* ---- writing ---- */

/* A row writer: cells are separated by ',' and quoted when needed. */
typedef struct {
	FILE *fp;
	int ncell; /* cells written in the current row */
} wl_csv_writer;

void wl_csvw_init(wl_csv_writer *w, FILE *fp);
void wl_csvw_str(wl_csv_writer *w, const char *s);
/* A number with `decimals` digits after the point; NaN writes an empty cell. */
void wl_csvw_num(wl_csv_writer *w, double v, int decimals);
/* A number with `sig` significant digits (%g style); NaN writes an empty cell. */
void wl_csvw_g(wl_csv_writer *w, double v, int sig);
void wl_csvw_int(wl_csv_writer *w, long long v);
void wl_csvw_empty(wl_csv_writer *w);
void wl_csvw_end(wl_csv_writer *w);
/* Writes a header from a NULL-terminated list of names and ends the row. */
void wl_csvw_header(wl_csv_writer *w, const char *const *names);

/* Formats v into buf with '.' as decimal mark whatever the locale.
 * WL_NUMBUF bytes are always enough.  Returns buf. */
#define WL_NUMBUF 64
char *wl_fmt_fixed(char *buf, double v, int decimals);
char *wl_fmt_g(char *buf, double v, int sig);

#endif
