/*
 * summary.h: SUMMARY.json, the measure stage's output, and its per-run CSV
 * row (the table `wakeline measure --csv` writes and the rows of a batch's
 * summary.csv).  This module is the only code that knows the keys and the
 * columns: one table gives both, in the order a reader wants to see them
 * (DEVELOPERS.md, "File formats"; keys explained in docs/measure.md).
 *
 *   {"format": "wakeline summary", "format_version": 1,
 *    "provenance": {...}, "runs": [{"id": 3, "segment": 0, ...}, ...]}
 *
 * Unknown values are null in JSON and empty cells in CSV.  An interval
 * [lo, hi] under key k is an array in JSON and the columns k_lo, k_hi in CSV.
 * Booleans are true/false in both.  "verdict_reasons" is an array of
 * strings in JSON and one cell joined with "; " in CSV; "budget" (per
 * measure the total standard error and each source's se and share) is in
 * JSON only.
 *
 * Ownership: a wl_summary owns its runs and strings; wl_summary_release frees
 * them (wl_summary_init first).  Errors follow err.h.
 */
#ifndef WL_FORMATS_SUMMARY_H
#define WL_FORMATS_SUMMARY_H

#include <stddef.h>

#include "core/err.h"

/* ---- the uncertainty budget and the verdict (contracts.md) ---- */

/* The measures that carry an interval and a budget, and their keys under
 * "budget": "curvature_per_m", "radius_m", "mean_speed_mps",
 * "yaw_osc_amp_deg", "yaw_osc_freq_hz", "straightness". */
typedef enum {
	WL_BM_CURVATURE,
	WL_BM_RADIUS,
	WL_BM_SPEED,
	WL_BM_YAW_AMP,
	WL_BM_YAW_FREQ,
	WL_BM_STRAIGHTNESS,
	WL_BM_N
} wl_budget_measure;

/* Where uncertainty comes from: "fit" (the statistical fit, with its
 * autocorrelated residual model), "calibration" (the camera model's own
 * uncertainty), "plane_height" (the marker plane's tolerance), "intrinsics"
 * (an assumed focal length or principal point), "water_depth". */
typedef enum {
	WL_BS_FIT,
	WL_BS_CALIBRATION,
	WL_BS_PLANE_HEIGHT,
	WL_BS_INTRINSICS,
	WL_BS_WATER_DEPTH,
	WL_BS_N
} wl_budget_source;

/* One measure's budget: the total standard error and each source's (in the
 * measure's unit); sources combine in quadrature, share = se² / total_se².
 * NaN where the measure has no budget or the source does not enter. */
typedef struct {
	double total_se;
	double se[WL_BS_N];
} wl_summary_budget;

const char *wl_budget_measure_key(wl_budget_measure m);
const char *wl_budget_source_name(wl_budget_source s);

/* A run's verdict: "ok", "check" (read the reasons before using the numbers)
 * or "reject" (the method could not follow the run); NONE when no verdict
 * was given (an older file). */
typedef enum { WL_VERDICT_NONE = 0, WL_VERDICT_OK, WL_VERDICT_CHECK, WL_VERDICT_REJECT } wl_verdict;
const char *wl_verdict_name(wl_verdict v); /* "" for NONE */

#define WL_SUMMARY_MAX_REASONS 8
#define WL_SUMMARY_REASON_LEN 200

/* The measures of one run (the measure stage computes them; measure.h calls
 * this type wl_measure_result).  Every value is NaN when it could not be
 * computed (too few points, no heading column...). */
typedef struct {
	size_t n_rows, n_measured, n_used; /* n_used: rows with a position (not written) */
	double t_start_s, duration_s, tracked_fraction;
	double path_length_m, net_displacement_m, straightness;
	double mean_speed_mps, speed_sd_mps, mean_yaw_rate_degps, heading_drift_degps;
	/* circle */
	double curvature_per_m, curvature_se_per_m, curvature_ci95_per_m[2];
	int straight;                  /* 1: radius_m is NaN */
	double radius_m;               /* signed, NaN when straight */
	double radius_body_diameters;  /* |radius| / body diameter, NaN when straight */
	double centre_x_m, centre_y_m; /* NaN when straight */
	double arc_deg, fit_rms_m;
	double radius_taubin_m, radius_kasa_m; /* unsigned, for comparison */
	int ar_order;                          /* order of the residual model behind the interval */
	/* oscillation */
	double yaw_osc_freq_hz, yaw_osc_amp_deg, yaw_osc_r2;
	double sway_osc_freq_hz, sway_amp_m;
	/* 95% intervals from the budget's total (the curvature's is above) */
	double radius_ci95_m[2], mean_speed_ci95_mps[2], straightness_ci95[2];
	double yaw_osc_amp_ci95_deg[2], yaw_osc_freq_ci95_hz[2];
	wl_summary_budget budget[WL_BM_N];
	/* the verdict and its reasons, short sentences for people */
	wl_verdict verdict;
	int n_reasons;
	char reasons[WL_SUMMARY_MAX_REASONS][WL_SUMMARY_REASON_LEN];
} wl_summary_measures;

struct cJSON;
/* Adds the "budget" object of summary.json (the measures with a total, as
 * the writer spells them) to o; nothing when no measure has a budget.  For
 * pages that show the budget as summary.json holds it. */
void wl_summary_add_budget(struct cJSON *o, const wl_summary_measures *m);

/* A key a reader did not know, kept as text (a newer writer's, or another
 * tool's): scalars as written, intervals as key_lo / key_hi. */
typedef struct {
	char *key, *value;
} wl_summary_extra;

/* One run: one segment of one robot. */
typedef struct {
	long id;
	long segment;
	int headline;              /* 1: the robot's longest segment */
	double trim_start_s;       /* from the robot's first row to the segment's start */
	double commanded_period_s; /* NaN: none was given */
	/* the camera watch while the run was filmed (CLEAN.json's "camera", from
	 * the RAW sidecar): moves whose bracket overlaps the run, and the
	 * seconds of it whose poses are suspect (a move that could not be
	 * registered again); NaN when the clip has no such record */
	double camera_moves, camera_suspect_s;
	wl_summary_measures m;
	size_t nextra; /* reader only */
	wl_summary_extra *extra;
} wl_summary_run;

typedef struct {
	char *input; /* the CLEAN.csv the runs came from, as given */
	double body_diameter_m, commanded_period_s, min_arc_deg; /* NaN when not given */
	size_t nruns;
	wl_summary_run *runs; /* sorted by id, then segment */
} wl_summary;

void wl_summary_init(wl_summary *s);
void wl_summary_release(wl_summary *s);
/* A run's measures all NaN (counts 0). */
void wl_summary_measures_init(wl_summary_measures *m);

/* Writes SUMMARY.json and, when csv_path is not NULL, the per-run CSV table,
 * both atomically: the table is committed first and removed again if the
 * JSON cannot be, so a failure leaves neither. */
wl_status wl_summary_write(const char *json_path, const char *csv_path, const wl_summary *s, wl_err *err);

/* Reads SUMMARY.json (format and version checked).  *s is initialised here
 * and released by the caller (also after a failure). */
wl_status wl_summary_read(const char *path, wl_summary *s, wl_err *err);
wl_status wl_summary_parse(const char *name, const char *text, size_t len, wl_summary *s, wl_err *err);

/* ---- the per-run CSV row ---- */

/* The columns, in table order; WL_SUMCOL_N of them. */
typedef enum {
	WL_SUMCOL_ID,
	WL_SUMCOL_SEGMENT,
	WL_SUMCOL_HEADLINE,
	WL_SUMCOL_VERDICT,
	WL_SUMCOL_VERDICT_REASONS,
	WL_SUMCOL_RADIUS,
	WL_SUMCOL_RADIUS_LO,
	WL_SUMCOL_RADIUS_HI,
	WL_SUMCOL_CURVATURE,
	WL_SUMCOL_CURVATURE_LO,
	WL_SUMCOL_CURVATURE_HI,
	WL_SUMCOL_STRAIGHT,
	WL_SUMCOL_FIT_RMS,
	WL_SUMCOL_ARC,
	WL_SUMCOL_RADIUS_BODY,
	WL_SUMCOL_PATH_LENGTH,
	WL_SUMCOL_NET_DISPLACEMENT,
	WL_SUMCOL_STRAIGHTNESS,
	WL_SUMCOL_STRAIGHTNESS_LO,
	WL_SUMCOL_STRAIGHTNESS_HI,
	WL_SUMCOL_MEAN_SPEED,
	WL_SUMCOL_MEAN_SPEED_LO,
	WL_SUMCOL_MEAN_SPEED_HI,
	WL_SUMCOL_SPEED_SD,
	WL_SUMCOL_MEAN_YAW_RATE,
	WL_SUMCOL_HEADING_DRIFT,
	WL_SUMCOL_YAW_FREQ,
	WL_SUMCOL_YAW_FREQ_LO,
	WL_SUMCOL_YAW_FREQ_HI,
	WL_SUMCOL_YAW_AMP,
	WL_SUMCOL_YAW_AMP_LO,
	WL_SUMCOL_YAW_AMP_HI,
	WL_SUMCOL_SWAY_AMP,
	WL_SUMCOL_TRIM_START,
	WL_SUMCOL_DURATION,
	WL_SUMCOL_TRACKED,
	WL_SUMCOL_T_START,
	WL_SUMCOL_ROWS,
	WL_SUMCOL_MEASURED_ROWS,
	WL_SUMCOL_CURVATURE_SE,
	WL_SUMCOL_AR_ORDER,
	WL_SUMCOL_CENTRE_X,
	WL_SUMCOL_CENTRE_Y,
	WL_SUMCOL_RADIUS_TAUBIN,
	WL_SUMCOL_RADIUS_KASA,
	WL_SUMCOL_YAW_R2,
	WL_SUMCOL_YAW_PERIOD,
	WL_SUMCOL_SWAY_FREQ,
	WL_SUMCOL_COMMANDED_PERIOD,
	WL_SUMCOL_PERIOD_RATIO,
	WL_SUMCOL_CAMERA_MOVES,
	WL_SUMCOL_CAMERA_SUSPECT,
	WL_SUMCOL_N
} wl_summary_col;

/* The column's name (NULL past the end). */
const char *wl_summary_col_name(wl_summary_col col);
/* The cell text of a run in column col ("" when unknown); buf holds cap
 * bytes (WL_SUMMARY_CELL is always enough).  Returns buf. */
#define WL_SUMMARY_CELL (WL_SUMMARY_MAX_REASONS * (WL_SUMMARY_REASON_LEN + 2))
char *wl_summary_cell(const wl_summary_run *r, wl_summary_col col, char *buf, size_t cap);

#endif
