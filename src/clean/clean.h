/*
 * clean.h: the fourth stage, clean and segment.  RAW.csv (one detection per
 * frame per robot, from the tracker) -> smoothed pose tracks with velocities,
 * outliers rejected, short gaps bridged, long gaps split into segments, the
 * start trimmed to steady motion and the end cut at the tank wall -> CLEAN.csv
 * and the CLEAN.json sidecar (formats in DEVELOPERS.md and docs/clean.md).
 *
 * The module's headers, in reading order:
 *   clean/raw.h   RAW.csv read and grouped per robot (raw.c)
 *   clean/kin.h   kinematic Kalman filter + Rauch-Tung-Striebel smoother for
 *                 one axis (kin.c)
 *   clean/sg.h    Savitzky-Golay weights by local least squares in t (sg.c)
 *   clean/clean.h this one: the stage (params.c, clean.c with the private
 *                 clean_work.h, smooth.c, segment.c, rows.c, cleanio.c)
 *
 * Units: seconds, metres, radians (SI, unit in the name).  Headings are
 * counter-clockwise from +x; written wrapped to (-pi, pi], smoothed unwrapped.
 *
 * Ownership: wl_clean_raw_read returns an object freed by wl_clean_raw_destroy;
 * wl_clean_run fills a wl_clean_result released by wl_clean_result_release.
 * Errors: every fallible function returns wl_status and fills err with
 * "file:line: what is wrong: what to do".  Nothing here prints or exits.
 *
 * Memory: the reader keeps every row (about 64 bytes per row); the smoother
 * needs the whole track of one robot at a time for its backward pass (about
 * 600 bytes per frame), so memory grows with the clip length.
 */
#ifndef WL_CLEAN_H
#define WL_CLEAN_H

#include <stddef.h>
#include <stdint.h>

#include "clean/raw.h"
#include "core/diag.h"
#include "core/err.h"
#include "formats/clean.h" /* the rows, parameters and per-robot records */

/* Fills the documented defaults. */
void wl_clean_params_init(wl_clean_params *p);
/* Checks ranges; the message names the option. */
wl_status wl_clean_params_check(const wl_clean_params *p, wl_err *err);

/* Runs the stage on every robot.  Warnings (no tank outline, so no wall cut)
 * go to diag (may be NULL); the parameters are not an options struct with a
 * diag of their own because the sidecar records them as they are.  *out is
 * released with wl_clean_result_release (also after a failure). */
wl_status wl_clean_run(const wl_clean_raw *raw, const wl_clean_params *p, const wl_diag *diag,
                       wl_clean_result *out, wl_err *err);
void wl_clean_result_release(wl_clean_result *res);

/* Distance (m) from (x, y) to the outline polygon's boundary, negative
 * outside the polygon. */
double wl_clean_outline_dist(const wl_clean_params *p, double x, double y);

/* The sidecar's record of the input (and of the outline's source, which the
 * caller fills in). */
void wl_clean_source_init(wl_clean_source *src, const wl_clean_raw *raw);

#endif
