/*
 * clean.h (formats): CLEAN.csv, the clean stage's table, and CLEAN.json, its
 * sidecar (DEVELOPERS.md, "File formats"; the sidecar's keys in
 * docs/clean.md).  This module is the only code that knows their columns
 * and keys, and it defines the data they carry: the rows, the parameters
 * that made them, and what was done to each robot.  The clean stage fills
 * these (clean/clean.h); measure and report read CLEAN.csv through the
 * streaming reader here.
 *
 *   CLEAN.csv  t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,
 *              vx_mps,vy_mps,segment,status,cut
 *   CLEAN.json {"format": "wakeline clean sidecar", "format_version": 1,
 *              "input", "calibration", "camera", "parameters", "robots"}
 *   ("camera": the camera watch's record from the RAW sidecar, carried on
 *   for summary.json; null when RAW.csv came without one)
 *
 * Ownership: wl_clean_result's arrays belong to it (the clean stage frees
 * them with wl_clean_result_release); rows handed to a reader's callback are
 * borrowed for the call; a wl_clean_sidecar is released with
 * wl_clean_sidecar_release.  Errors follow err.h.
 */
#ifndef WL_FORMATS_CLEAN_H
#define WL_FORMATS_CLEAN_H

#include <stddef.h>
#include <stdint.h>

#include "core/err.h"
#include "formats/cal.h"
#include "formats/rawside.h"

/* ---- the parameters (the sidecar's "parameters") ---- */

typedef enum { WL_CLEAN_RTS = 0, WL_CLEAN_SG = 1 } wl_clean_smoother;
typedef enum { WL_TRIM_AUTO = 0, WL_TRIM_FIXED, WL_TRIM_NONE } wl_trim_mode;

#define WL_CLEAN_MAX_OUTLINE WL_CAL_MAX_OUTLINE

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
	double rate_hz; /* > 0: resample evenly at this rate */
} wl_clean_params;

/* ---- CLEAN.csv ---- */

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
	/* the detection's own heading (not smoothed; the tag's mounting angle
	 * removed), moved to t_s along the smoothed heading when the row was
	 * resampled; NaN where none was detected or it was an outlier.  Measure
	 * fits the yaw oscillation to it: the smoother attenuates fast
	 * oscillations, the detections do not. */
	double heading_meas_rad;
	int segment; /* >= 0 analysed, -1 left out (see cut) */
	wl_clean_status status;
	wl_clean_cut cut;
	unsigned char heading_outlier, pos_outlier; /* why an outlier (not written) */
	long line;                                  /* reader: the row's line in the file */
} wl_clean_row;

/* ---- what the sidecar records: per robot, what was done ---- */

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
	/* the least estimated noise: the detector's resolution (NaN when given) */
	double sigma_pos_floor_m, sigma_heading_floor_rad;
	int q_estimated;
	/* before widening (equal to the used values when widen_* is 0) */
	double sigma_pos_est_m, sigma_heading_est_rad, q_pos_est, q_heading_est;
	int widen_pos, widen_heading;          /* widening steps (x4 variance, x10 q each) */
	size_t restarts_pos, restarts_heading; /* filter restarts after runs of far detections */
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

/* Where the input and the outline came from, recorded in the sidecar. */
typedef struct {
	const char *input_path;   /* RAW.csv as given */
	uint64_t input_bytes;     /* its size */
	const char *input_sha256; /* and SHA-256 */
	size_t input_rows;
	const char *cal_path;     /* NULL if none */
	const char *cal_sha256;   /* NULL if none */
	int tank_rect;            /* 1: the outline is a rectangle given by hand (--tank) */
	const wl_rawside *camera; /* the RAW sidecar's camera watch record; NULL: none */
} wl_clean_source;

/* Writes CLEAN.csv and the sidecar, both atomically; neither is replaced
 * unless both were written in full. */
wl_status wl_clean_write(const char *csv_path, const char *json_path, const wl_clean_params *p,
                         const wl_clean_source *src, const wl_clean_result *res, wl_err *err);

/* ---- reading CLEAN.csv ---- */

/* Called for each data row (borrowed); a non-WL_OK return stops the reading
 * and is returned.  Checked before the call: t_s a number, id and segment
 * whole numbers, a known status and cut, numbers or empty cells elsewhere
 * (NaN when empty or when the column is absent; frame -1 when absent). */
typedef wl_status (*wl_clean_row_fn)(const wl_clean_row *row, void *ctx, wl_err *err);

/* Reads CLEAN.csv (required columns t_s, id, x_m, y_m, segment, status). */
wl_status wl_clean_read(const char *path, wl_clean_row_fn fn, void *ctx, wl_err *err);
/* Same over a buffer; name is used in messages. */
wl_status wl_clean_read_mem(const char *name, const char *data, size_t len, wl_clean_row_fn fn, void *ctx,
                            wl_err *err);

/* ---- reading CLEAN.json ---- */

/* What a reader gets back from a sidecar: where the table came from and,
 * per robot, where it was cut and its segments. */
typedef struct {
	long id;
	int still;
	double trim_s, end_s;                 /* NaN when none */
	char trim_reason[24], end_reason[24]; /* as written */
	double sigma_pos_m;                   /* the position noise used; NaN when absent */
	int widened;                          /* the noise model was widened (position or heading) */
	size_t outliers, measured;            /* detections rejected and used */
	size_t nsegments;
	wl_clean_segment *segments;
} wl_clean_sidecar_robot;

typedef struct {
	char input_path[1024], input_sha256[65];
	char cal_path[1024], cal_sha256[65]; /* "" when none */
	int camera_known;                    /* 1: the sidecar carries the camera watch's record */
	wl_rawside camera;                   /* moves (t_s, last_still_t_s, shift_px, reregistered) and the
	                                      * suspect interval; enabled 0 when the run was not watched */
	size_t nrobots;
	wl_clean_sidecar_robot *robots;
} wl_clean_sidecar;

wl_status wl_clean_sidecar_read(const char *path, wl_clean_sidecar *out, wl_err *err);
wl_status wl_clean_sidecar_parse(const char *name, const char *text, size_t len, wl_clean_sidecar *out,
                                 wl_err *err);
void wl_clean_sidecar_release(wl_clean_sidecar *s);

#endif
