/*
 * readers.h: what the report's readers of the measure stage's files share
 * (internal to src/report/): the columns of CLEAN.csv looked up once from
 * its header (the readers stream rows through core/csvio), and values of
 * SUMMARY.json runs.  Formats: DEVELOPERS.md.  When src/formats/ owns
 * these files, this is the one place in the report to point at it.
 */
#ifndef WL_REPORT_READERS_H
#define WL_REPORT_READERS_H

#include <stddef.h>

#include <cjson/cJSON.h>

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

/* A run's id as text (ids are numbers or strings in SUMMARY.json; CLEAN.csv
 * writes them as text): "" when neither. */
void wl_summary_id_text(const cJSON *v, char *buf, size_t cap);
/* A number of object o under key k, NaN when absent or not a number. */
double wl_summary_num(const cJSON *o, const char *k);

#endif
