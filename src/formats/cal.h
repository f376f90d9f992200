/*
 * cal.h: the parts of CAL.json that stages other than calibration read: the
 * format check, the tank outline ("tank_outline_m") and the calibration
 * points with their residuals ("points").  The camera model's keys belong to
 * the calibration stage (src/calib/calfile.c), which builds on this module;
 * the clean stage takes the outline for its wall cut and the report the
 * outline and the floor markers for its maps.
 *
 * Rules (one for every reader): "format" must be "wakeline-calibration" and
 * "format_version" at most WL_CAL_FORMAT_VERSION; "tank_outline_m" is
 * always there (the calibration writes it): an empty array means no
 * outline, otherwise it holds 3 to WL_CAL_MAX_OUTLINE [x, y] pairs of finite
 * numbers (metres); "points" absent means none.
 *
 * Ownership: a wl_cal_doc holds the parsed file and is released with
 * wl_cal_doc_release (also after a failed read).  Reading a file reads its
 * bytes once: the document keeps their SHA-256 for provenance records.
 */
#ifndef WL_FORMATS_CAL_H
#define WL_FORMATS_CAL_H

#include <stddef.h>
#include <stdint.h>

#include <cjson/cJSON.h>

#include "core/err.h"

#define WL_CAL_FORMAT_VERSION 1
#define WL_CAL_MAX_OUTLINE 64
#define WL_CAL_MAX_POINTS 256

/* One correspondence used to calibrate, with its residual after the fit. */
typedef struct {
	char id[32];          /* "7" (marker centre), "7.c0".."7.c3" (corners) or "row 4" */
	double u_px, v_px;    /* observed pixel (distortion included) */
	double x_m, y_m, z_m; /* tank position */
	double residual_px;   /* |projected - observed| through the final camera model */
	double residual_mm;   /* observed pixel mapped to the plane z_m, distance to (x, y), mm */
	int used;             /* 0: left out of the fit as an outlier */
} wl_calib_point;

/* The tank outline polygon in floor metres (n == 0: none). */
typedef struct {
	int n;
	double xy[WL_CAL_MAX_OUTLINE][2];
} wl_cal_outline;

/* A parsed CAL.json. */
typedef struct {
	char *path; /* as given (owned) */
	cJSON *root;
	uint64_t bytes;
	char sha256_hex[65]; /* of the file's bytes */
} wl_cal_doc;

/* Reads and parses path and checks its format and version. */
wl_status wl_cal_doc_read(const char *path, wl_cal_doc *d, wl_err *err);
/* Same over a buffer (name is used in messages; the hash is the buffer's). */
wl_status wl_cal_doc_parse(const char *name, const char *text, size_t len, wl_cal_doc *d, wl_err *err);
void wl_cal_doc_release(wl_cal_doc *d);

/* The tank outline (the rule above). */
wl_status wl_cal_get_outline(const wl_cal_doc *d, wl_cal_outline *out, wl_err *err);
/* The calibration points, at most max of them (more is WL_ELIMIT). */
wl_status wl_cal_get_points(const wl_cal_doc *d, wl_calib_point *pts, int max, int *n, wl_err *err);

/* Whether a point is a marker centre (a corner's id has a '.', "7.c0"). */
int wl_cal_point_is_centre(const wl_calib_point *p);

/* ---- writing (the calibration stage builds the rest of the object) ---- */

/* A new CAL.json object with "format" and "format_version"; NULL when out
 * of memory.  Free with cJSON_Delete. */
cJSON *wl_cal_new_root(void);
/* Adds "tank_outline_m" and "points".  Returns 0 when out of memory. */
int wl_cal_add_outline(cJSON *root, const wl_cal_outline *o);
int wl_cal_add_points(cJSON *root, const wl_calib_point *pts, int n);

#endif
