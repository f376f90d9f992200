/*
 * clean.h: the fourth stage, clean and segment.  RAW.csv (one detection per
 * frame per robot, from the tracker) -> smoothed pose tracks with velocities,
 * outliers rejected, short gaps bridged, long gaps split into segments, the
 * start trimmed to steady motion and the end cut at the tank wall -> CLEAN.csv
 * and the CLEAN.json sidecar (formats in DEVELOPERS.md and docs/clean.md).
 *
 * Pieces, in reading order:
 *   wl_clean_raw_* RAW.csv reader with validation (raw.c)
 *   wl_sha256_*   a small SHA-256 for the input checksum (sha256.c)
 *   wl_kin_*      kinematic Kalman filter + Rauch-Tung-Striebel smoother for
 *                 one axis, constant velocity or constant acceleration (kin.c)
 *   wl_sg_*       Savitzky-Golay weights by local least squares in t (sg.c)
 *   wl_clean_*    the stage: per robot gaps, smoothing, outliers, trim, wall,
 *                 segments, resampling, writing (clean.c, cleanio.c)
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

#include "core/err.h"

/* ---------------------------------------------------------------- RAW.csv */

typedef struct {
	double t_s;
	long frame;
	double x_m, y_m, heading_rad; /* NaN when absent */
	unsigned char has_pos;        /* status ok or held, with x_m, y_m */
	unsigned char has_heading;    /* status ok or held, with heading_rad */
	unsigned char held;           /* status held: a pose refined where the detector missed */
	long line;                    /* line in RAW.csv, for messages */
	/* the time the pose belongs to: t_detect_s when given (rolling-shutter
	 * correction), else t_s; a lost row takes t_s plus the previous pose's
	 * t_detect_s - t_s of the same robot */
	double t_meas_s;
} wl_clean_raw_sample;

typedef struct {
	long id;
	size_t n, cap;
	wl_clean_raw_sample *s; /* in time order (validated strictly increasing, t_s and t_meas_s) */
	double t_offset_s;      /* reading: t_detect_s - t_s of the last pose */
} wl_clean_raw_track;

typedef struct {
	char *path; /* as given (owned) */
	size_t ntracks;
	wl_clean_raw_track *tracks; /* in order of first appearance */
	size_t nrows;
	uint64_t bytes;      /* size of the file */
	char sha256_hex[65]; /* SHA-256 of the file's bytes */
} wl_clean_raw;

#define WL_CLEAN_MAX_ROBOTS 4096

/* Reads and validates RAW.csv (required columns t_s, frame, id, x_m, y_m,
 * heading_rad, status; optional hold_score, t_detect_s; status ok, held or
 * lost; numbers in number cells; per id frames and times strictly
 * increasing, so no duplicate (frame, id)).  Errors name the file and line.
 * *out is freed with wl_clean_raw_destroy. */
wl_status wl_clean_raw_read(const char *path, wl_clean_raw **out, wl_err *err);
/* Same over a buffer (name is used in messages; checksum of the buffer). */
wl_status wl_clean_raw_read_mem(const char *name, const char *data, size_t len, wl_clean_raw **out,
                                wl_err *err);
void wl_clean_raw_destroy(wl_clean_raw *raw);

/* ---------------------------------------------------------------- SHA-256 */

/* FIPS 180-4.  Streaming: init, update any number of times, final. */
typedef struct {
	uint32_t h[8];
	uint64_t len;
	unsigned char buf[64];
	size_t nbuf;
} wl_sha256;
void wl_sha256_init(wl_sha256 *s);
void wl_sha256_update(wl_sha256 *s, const void *data, size_t n);
void wl_sha256_final(wl_sha256 *s, char hex[65]);
/* SHA-256 of a file's bytes; *bytes gets its size. */
wl_status wl_sha256_file(const char *path, char hex[65], uint64_t *bytes, wl_err *err);

/* ------------------------------------------------- kinematic RTS smoother */

/* One axis of a kinematic model: state (p, v) (dim 2, constant velocity) or
 * (p, v, a) (dim 3, constant acceleration), measurement p + white noise of
 * variance r.  Process noise is continuous white acceleration (dim 2) or
 * jerk (dim 3) of spectral density q, integrated exactly over each dt:
 *   dim 2: Q = q [dt^3/3 dt^2/2; dt^2/2 dt]
 *   dim 3: Q = q [dt^5/20 dt^4/8 dt^3/6; dt^4/8 dt^3/3 dt^2/2; dt^3/6 dt^2/2 dt]
 * Angular axes take innovations modulo 2 pi (the state is unwrapped). */
typedef struct {
	int dim;      /* 2 or 3 */
	double q;     /* process noise spectral density (units^2 / s^(2 dim - 1)) */
	double r;     /* measurement variance (units^2) */
	int angular;  /* 1: innovation wrapped to (-pi, pi] */
	double P0[3]; /* prior variances of p, v, a at a track's first sample */
} wl_kin_cfg;

/* Per-sample storage of the filter and smoother (the caller allocates n). */
typedef struct {
	double xp[3], Pp[9]; /* predicted (prior) at this sample */
	double xs[3], Ps[9]; /* filtered, then smoothed after wl_kin_smooth */
	double nu, S;        /* innovation and its variance (NaN when none) */
} wl_kin_step;

/* Filters and smooths one axis over n samples at times t (strictly
 * increasing).  z[i] NaN means no measurement (predicted only).  The prior
 * at t[0] has mean (first finite z, 0, 0) and variances cfg->P0.  Returns the
 * log-likelihood of the innovations in *loglik (may be NULL).  Returns 0 if a
 * covariance became singular.  (Rauch, Tung & Striebel 1965.) */
int wl_kin_smooth(const wl_kin_cfg *cfg, size_t n, const double *t, const double *z, wl_kin_step *st,
                  double *loglik);

/* Lower-level steps used by wl_kin_smooth and by the multi-axis gating in
 * clean.c: prior at sample 0, predict from i-1 to i, update, smooth. */
void wl_kin_start(const wl_kin_cfg *cfg, double z0, wl_kin_step *s0);
void wl_kin_predict(const wl_kin_cfg *cfg, const wl_kin_step *prev, double dt, wl_kin_step *cur);
/* Innovation of z at cur (wrapped for angular axes) and its variance. */
void wl_kin_innov(const wl_kin_cfg *cfg, const wl_kin_step *cur, double z, double *nu, double *S);
void wl_kin_update(const wl_kin_cfg *cfg, wl_kin_step *cur, double nu, double S);
/* Skips the update (no measurement or rejected): filtered = predicted. */
void wl_kin_skip(const wl_kin_cfg *cfg, wl_kin_step *cur);
/* Backward pass over st[0..n-1]; t as above.  Returns 0 when singular. */
int wl_kin_backward(const wl_kin_cfg *cfg, size_t n, const double *t, wl_kin_step *st);

/* --------------------------------------------------------- Savitzky-Golay */

#define WL_SG_MAX_WINDOW 101
#define WL_SG_MAX_ORDER 6

/* Weights w[0..n-1] such that sum w[i] z[i] is the deriv-th derivative at t0
 * of the least-squares polynomial of the given order through (t[i], z[i]).
 * With t = -m..m and t0 = 0 these are Savitzky & Golay's (1964) convolution
 * weights (as corrected by Steinier et al. 1972), in data order.  Returns 0
 * when the fit is singular (n <= order or repeated times). */
int wl_sg_weights(const double *t, int n, double t0, int order, int deriv, double *w);
/* Evenly spaced (unit step) weights of a centred window, in data order. */
int wl_sg_coeffs(int window, int order, int deriv, double *w);

/* --------------------------------------------------------------- the stage */

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
	double speed_threshold_mps, speed_sigma_mps;
	double period_s; /* heading oscillation period, NaN if none found */
	double window_s; /* settling window used */
	double t_first_s, t_last_s;
	double onset_s;          /* first sustained motion, NaN if still */
	double trim_s;           /* rows before this are cut 'start' */
	const char *trim_reason; /* "settled", "not-settled", "fixed", "none", "still", "too-short",
	                            "no-detections" */
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
