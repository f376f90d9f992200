/*
 * format.h: the checks every file-format reader of src/formats/ makes before
 * it reads anything, so that a wrong or newer file is refused with one clear
 * message instead of a confusing one later (redis's rdb check is the model).
 *
 *   JSON files carry "format" (a name) and "format_version" (a whole number);
 *   a reader refuses another name, and a version newer than it knows.
 *   CSV files are known by their header: a reader refuses a header without
 *   its format's required columns.
 *
 * Messages follow err.h's rule and say what to do: which command writes the
 * file, or that wakeline needs updating.  Nothing here allocates.
 */
#ifndef WL_FORMATS_FORMAT_H
#define WL_FORMATS_FORMAT_H

#include <cjson/cJSON.h>

#include "core/csvio.h"
#include "core/err.h"

/* What a reader expects of a file. */
typedef struct {
	const char *what;     /* "RAW.csv", "SUMMARY.json", ... for messages */
	const char *format;   /* JSON: the value of "format" */
	int version;          /* JSON: the newest "format_version" this reader knows */
	const char *producer; /* the command that writes it, e.g. "wakeline track" */
} wl_format;

/* The JSON sidecar beside a table: its name with ".json" for the extension
 * (CLEAN.csv -> CLEAN.json, raw.csv -> raw.json; a name without one, or a
 * dot file, gets ".json" added).  Into buf; 0 when it does not fit. */
int wl_format_sidecar_path(const char *path, char *buf, size_t cap);

/* Checks "format" and "format_version" of a parsed JSON file `name`.
 * A missing format_version counts as 1. */
wl_status wl_format_check_json(const wl_format *f, const cJSON *root, const char *name, wl_err *err);

/* Adds "format" and "format_version" to root (the first keys of a file). */
void wl_format_add_json(const wl_format *f, cJSON *root);

/* Checks that a CSV header row holds every column of `required`
 * (NULL-terminated); the message names the file, the line, the first
 * missing column and the columns found. */
wl_status wl_format_check_header(const wl_format *f, const wl_csv_row *header, const char *const *required,
                                 wl_err *err);

#endif
