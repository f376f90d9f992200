/*
 * manifest.h: the manifest of a sweep, a CSV with one row per clip: a `clip`
 * column (the clip's path relative to the clip folder) and any parameter
 * columns, which go beside the clip's runs in summary.csv.  Columns named
 * after a processing option set that option for the clip (an empty cell
 * keeps the batch's value):
 *   cal                 CAL.json (relative to the manifest's folder unless absolute)
 *   robots              ROBOTS.csv (likewise)
 *   mode                tag | colour
 *   family              AprilTag family (tag36h11, ...)
 *   plane_height_m      marker plane height above the floor, metres
 *   body_diameter_m     robot size, metres (> 0)
 *   trim                auto | none | seconds
 *   smoother            rts | sg
 *   commanded_period_s  the commanded oscillation period, seconds (> 0)
 * Every such cell is checked when the manifest is read, so a typo stops the
 * batch before any clip runs (errors name the file and line).
 *
 * Ownership: wl_manifest_init/_release; every string belongs to the
 * manifest, and a row's options point into its cells.
 */
#ifndef WL_FORMATS_MANIFEST_H
#define WL_FORMATS_MANIFEST_H

#include <stddef.h>

#include "core/err.h"

typedef enum { WL_MF_MODE_UNSET = -1, WL_MF_MODE_TAG = 0, WL_MF_MODE_COLOUR = 1 } wl_manifest_mode;
typedef enum {
	WL_MF_TRIM_UNSET = -1,
	WL_MF_TRIM_AUTO = 0,
	WL_MF_TRIM_FIXED,
	WL_MF_TRIM_NONE
} wl_manifest_trim;
typedef enum {
	WL_MF_SMOOTHER_UNSET = -1,
	WL_MF_SMOOTHER_RTS = 0,
	WL_MF_SMOOTHER_SG = 1
} wl_manifest_smoother;

/* The options a row sets: NULL, NaN or *_UNSET where its cell is empty or
 * the column absent.  Paths are resolved against the manifest's folder. */
typedef struct {
	const char *cal, *robots, *family;
	wl_manifest_mode mode;
	double plane_height_m, body_diameter_m, commanded_period_s;
	wl_manifest_trim trim;
	double trim_s; /* WL_MF_TRIM_FIXED */
	wl_manifest_smoother smoother;
} wl_manifest_opts;

typedef struct {
	char *clip;         /* relative to the clip folder, "./" removed */
	long line;          /* line of the manifest, for messages */
	char **values;      /* one per manifest column ("" when empty) */
	char *cal, *robots; /* resolved paths (owned), NULL when not set */
	wl_manifest_opts opts;
	int found; /* set by the batch when the clip exists */
} wl_manifest_row;

typedef struct {
	char *path;
	size_t ncols;
	char **cols; /* every column, `clip` included */
	int c_clip;  /* index of `clip` */
	size_t nrows;
	wl_manifest_row *rows;
} wl_manifest;

void wl_manifest_init(wl_manifest *m);
void wl_manifest_release(wl_manifest *m);
/* Reads a manifest CSV.  Errors name file and line: a missing `clip`
 * column, a column without a name or named twice, a row with another number
 * of cells than the header, an empty clip cell, a clip listed twice, an
 * option cell that is not a valid value. */
wl_status wl_manifest_load(const char *path, wl_manifest *m, wl_err *err);
/* The row naming clip (relative path), or NULL. */
const wl_manifest_row *wl_manifest_find(const wl_manifest *m, const char *clip);
/* Whether column i is the clip column (not a parameter). */
int wl_manifest_is_clip_col(const wl_manifest *m, size_t i);

#endif
