/*
 * cleanrows.h: the columns of CLEAN.csv the report reads (plots and run
 * pages), looked up once from the header.  Internal to src/report/; the
 * readers themselves stream rows through core/csvio.  (CLEAN.csv's format
 * is in DEVELOPERS.md.)
 */
#ifndef WL_REPORT_CLEANROWS_H
#define WL_REPORT_CLEANROWS_H

#include "core/csvio.h"
#include "core/err.h"

typedef struct {
	int t, id, x, y, h, v, yr, seg, st; /* -1 when absent */
} wl_clean_cols;

/* From the header row: checks the NULL-terminated required names (error
 * "FILE:LINE: ..." naming the first missing) and fills c. */
wl_status wl_clean_cols_read(const wl_csv_row *header, const char *const *required, wl_clean_cols *c,
                             wl_err *err);

/* The id cell of a data row, or NULL with WL_EFORMAT set (naming file and
 * line) when the row is too short to have one. */
const char *wl_clean_cols_id(const wl_csv_row *row, const wl_clean_cols *c, wl_err *err);

#endif
