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

typedef enum { WL_CLEAN_RTS = 0, WL_CLEAN_SG = 1 } wl_clean_smoother;
typedef enum { WL_TRIM_AUTO = 0, WL_TRIM_FIXED, WL_TRIM_NONE } wl_trim_mode;

#define WL_CLEAN_MAX_OUTLINE 64

typedef struct {
	wl_clean_smoother smoother;
	int model_dim;            /* 2: constant velocity (default), 3: constant acceleration */
	double sigma_pos_m;       /* measurement noise; <= 0: estimated (MAD rule) */
	double sigma_heading_rad; /* likewise */
	double q_pos;             /* process noise density m^2/s^3 (CV); <= 0: maximum likelihood */
	double q_heading;         /* rad^2/s^3 (CV); <= 0: maximum likelihood */
	double gate_prob;         /* chi-square gate probability, default 0.999 */
	double max_reject_frac;   /* more rejected detections than this share: the model is
	                           * widened and the smoothing retried (default 0.03) */
	int sg_window, sg_order;  /* Savitzky-Golay, default 11 points, order 2 */
	double max_gap_s;         /* bridge gaps up to this (default 0.5 s) */
	wl_trim_mode trim;
	double trim_s;               /* WL_TRIM_FIXED: seconds after the robot's first row */
	double settle_tol;           /* relative speed tolerance when settled (default 0.02) */
	double settle_yaw_tol_radps; /* absolute yaw-rate tolerance floor (default 0.1) */
	double default_window_s;     /* settling window when no oscillation is found (1.0 s) */
	double min_speed_mps;        /* floor of the moving threshold (default 0.005 m/s) */
	double min_segment_s;        /* shorter pieces are left out, cut 'gap' (default 1.0 s) */
	double body_diameter_m;      /* default 0.1 m */
	double wall_margin_m;        /* < 0: body radius */
	int n_outline;               /* 0: no wall cut */
	double outline_m[WL_CLEAN_MAX_OUTLINE][2];
	double rate_hz;      /* > 0: resample evenly at this rate */
	const wl_diag *diag; /* warnings (may be NULL) */
} wl_clean_params;

/* Fills the documented defaults. */
void wl_clean_params_init(wl_clean_params *p);
/* Checks ranges; the message names the option. */
wl_status wl_clean_params_check(const wl_clean_params *p, wl_err *err);

typedef enum { WL_ST_MEASURED = 0, WL_ST_FILLED, WL_ST_OUTLIER } wl_clean_status;
typedef enum { WL_CUT_NONE = 0, WL_CUT_START, WL_CUT_WALL, WL_CUT_GAP, WL_CUT_STILL } wl_clean_cut;
const char *wl_clean_status_name(wl_clean_status s);
const char *wl_clean_cut_name(wl_clean_cut c);

typedef struct {
	double t_s;
	long frame;
	long id;
	double x_m, y_m, heading_rad; /* heading wrapped to (-pi, pi] */
	double speed_mps, yaw_rate_radps, vx_mps, vy_mps;
	int segment; /* >= 0 analysed, -1 left out (see cut) */
	wl_clean_status status;
	wl_clean_cut cut;
	unsigned char heading_outlier, pos_outlier; /* why an outlier */
} wl_clean_row;

typedef struct {
	double t0_s, t1_s; /* last detection before, first after */
	int filled;        /* 1: bridged, 0: split */
} wl_clean_gap;

typedef struct {
	double t0_s, t1_s;
	size_t rows;
} wl_clean_segment;

typedef struct {
	long id;
	size_t rows_in, rows_out, measured, filled, outliers, outliers_pos, outliers_heading;
	size_t dropped; /* lost rows inside long gaps or outside the detected span */
	size_t ngaps, gaps_filled, gaps_split;
	wl_clean_gap *gaps;
	size_t nsegments;
	wl_clean_segment *segments;
	int still;
	double sigma_pos_m, sigma_heading_rad, q_pos, q_heading; /* used */
	int sigma_estimated; /* 0 given, 1 estimated, 2 default (too few detections) */
	int q_estimated;
	/* before widening (equal to the used values when widen_* is 0) */
	double sigma_pos_est_m, sigma_heading_est_rad, q_pos_est, q_heading_est;
	int widen_pos, widen_heading;          /* widening steps (x4 variance, x10 q each) */
	size_t restarts_pos, restarts_heading; /* filter restarts after runs of rejections */
	double speed_threshold_mps, speed_sigma_mps;
	double period_s; /* heading oscillation period, NaN if none found */
	double window_s; /* settling window used */
	double t_first_s, t_last_s;
	double onset_s;           /* first sustained motion, NaN if still */
	double trim_s;            /* rows before this are cut 'start' */
	const char *trim_reason;  /* "settled", "not-settled", "fixed", "none", "still", "too-short",
	                             "no-detections" */
	double settle_unjudged_s; /* time from the onset to where the trim was decided whose
	                           * windows could not be judged (gaps) */
	const char *turn_source;  /* turning rate of the settling test: "heading",
	                           * "direction of travel", "none" */
	double speed_ref_mps, yaw_ref_radps;     /* steady values (mean over the second half) */
	double settle_tol_mps, settle_tol_radps; /* tolerances used */
	double wall_s;                           /* rows from here are cut 'wall'; NaN none */
	const char *end_reason; /* "wall", "end-of-track", "no-outline", "still", "too-short",
	                           "no-detections" */
	double wall_dist_m;     /* distance to the outline at wall_s */
} wl_clean_robot;

typedef struct {
	wl_clean_row *rows; /* sorted by (t, id) / (frame, id) */
	size_t nrows;
	wl_clean_robot *robots; /* same order as wl_clean_raw's tracks */
	size_t nrobots;
} wl_clean_result;

/* Runs the stage on every robot.  *out is released with
 * wl_clean_result_release (also after a failure). */
wl_status wl_clean_run(const wl_clean_raw *raw, const wl_clean_params *p, wl_clean_result *out, wl_err *err);
void wl_clean_result_release(wl_clean_result *res);

/* Distance (m) from (x, y) to the outline polygon's boundary, negative
 * outside the polygon. */
double wl_clean_outline_dist(const wl_clean_params *p, double x, double y);

/* Loads "tank_outline_m" ([[x, y], ...], at least 3 points; absent or empty:
 * no outline, p->n_outline = 0) from CAL.json
 * into p; *sha_hex gets the file's SHA-256. */
wl_status wl_clean_load_outline(const char *cal_path, wl_clean_params *p, char sha_hex[65], wl_err *err);

/* Where the outline came from, recorded in the sidecar. */
typedef struct {
	const char *cal_path;   /* NULL if none */
	const char *cal_sha256; /* NULL if none */
	int tank_rect;          /* 1: from --tank */
} wl_clean_source;

/* Writes CLEAN.csv and the sidecar, both atomically; neither is replaced
 * unless both were written.  (cleanio.c) */
wl_status wl_clean_write(const char *csv_path, const char *json_path, const wl_clean_raw *raw,
                         const wl_clean_params *p, const wl_clean_source *src, const wl_clean_result *res,
                         wl_err *err);

#endif
