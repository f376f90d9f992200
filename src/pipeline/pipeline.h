/*
 * pipeline.h: one clip through the whole pipeline as one library call:
 * track -> clean -> measure -> plots, in-process, with the files of
 * DEVELOPERS.md ("File formats") written between the stages, so that the
 * result is byte for byte what `wakeline track`, `clean` and `measure` give
 * when run one after the other on the same clip with the same options.
 * `wakeline process` is this call with options parsed from the command line;
 * `wakeline batch` makes it in each of its worker processes.
 *
 * Pipeline position: above the stages (track, clean, measure, report), below
 * the sweep (batch) and the command line.
 *
 * Files written into out_dir (created when missing), each atomically:
 *   raw.csv, clean.csv, clean.json, summary.json, and with plots
 *   trail.png (track's QC picture: the first frame with each robot's path),
 *   path_m.svg, path_m.png, heading.svg, heading.png and the clip's page
 *   run.html (src/report/report.h), which shows them all.
 *
 * Ownership: the calibration is borrowed (the caller loads CAL.json once per
 * clip, wl_calib_load); wl_process_result holds what the stages report and
 * is released with wl_process_result_release, also after a failure.
 * Diagnostics: warnings and progress of every stage go to o->diag (may be
 * NULL); the library prints nothing.
 */
#ifndef WL_PIPELINE_H
#define WL_PIPELINE_H

#include "calib/calib.h"
#include "clean/clean.h"
#include "core/diag.h"
#include "core/err.h"
#include "measure/measure.h"
#include "report/report.h"
#include "track/track.h"

typedef struct {
	wl_track_opts track;           /* mode, family, robots, plane height, detection */
	wl_watch_opts watch;           /* the camera watch (track/watch.h; on by default; its family
	                                  is the tracker's) */
	wl_clean_params clean;         /* smoothing, gaps, trim, wall; with n_outline == 0 the outline is
	                                  the calibration's tank_outline_m */
	int tank_rect;                 /* 1: clean.outline_m is a rectangle given by hand */
	wl_measure_clean_opts measure; /* min arc, body diameter, commanded period (its diag is o->diag;
	                                  its budget and sidecar are set by wl_process_clip) */
	wl_measure_tolerances tol;     /* the uncertainty budget's tolerances (docs/measure.md) */
	int budget;                    /* 1 (default): the budget's sources from the calibration */
	int decode_threads;            /* 0: all cores */
	int plots;                     /* 1 (default): trail.png, the path and heading plots, run.html */
	const wl_diag *diag;           /* warnings and progress (may be NULL) */
	/* for run.html: the clip's name and its manifest parameters (batch sets
	 * them; NULL / 0: the folder's name, none); borrowed */
	const char *clip_name;
	size_t nparams;
	const char *const *param_names, *const *param_values;
} wl_process_opts;

/* The measure stage's uncertainty budget for a calibration: the camera part
 * (the calibration solved again per uncertain input, with tolerances tol)
 * and the marker planes of the tracker's robots (ROBOTS.csv's
 * plane_height_m and plane_height_tol_m, else t->plane_height_m), set into
 * m, which then borrows b's contents: release b (with
 * wl_process_budget_release, also after a failure) after the last use of m.
 * wl_process_clip does this itself; `wakeline measure --cal` calls it. */
typedef struct {
	wl_measure_sys *sys;
	wl_measure_plane *planes;
} wl_process_budget;
wl_status wl_process_budget_setup(const wl_calib *cal, const wl_track_opts *t,
                                  const wl_measure_tolerances *tol, wl_measure_clean_opts *m,
                                  wl_process_budget *b, wl_err *err);
void wl_process_budget_release(wl_process_budget *b);

/* The documented defaults of every stage, plots on. */
void wl_process_opts_init(wl_process_opts *o);

/* Every setting of o that changes the outputs, as text (one "name=value"
 * per setting, numbers to 17 digits), so that a batch can tell when a clip
 * must be redone.  Returns a string to free(), or NULL when out of memory. */
char *wl_process_opts_describe(const wl_process_opts *o);

/* The file names inside the output folder. */
#define WL_PROCESS_RAW "raw.csv"
#define WL_PROCESS_CLEAN "clean.csv"
#define WL_PROCESS_SIDECAR "clean.json"
#define WL_PROCESS_SUMMARY "summary.json"
#define WL_PROCESS_TRAIL "trail.png"

typedef struct {
	wl_track_summary track; /* frames, rows, robots, detector statistics */
	wl_clean_result clean;  /* per robot what was cut (rows not kept: they are in clean.csv) */
	wl_summary summary;     /* the runs, as in summary.json */
	int stage_failed;       /* on failure: 1 track, 2 clean, 3 measure, 4 plots, 0 set-up */
} wl_process_result;

void wl_process_result_release(wl_process_result *r);

/* Runs one clip.  clip: the video; cal: its loaded calibration and cal_path
 * where it came from (recorded in clean.json); out_dir: where the files go.
 * On failure the message names the stage's file and what to do, and the
 * files of the stages before stay written (each one whole). */
wl_status wl_process_clip(const char *clip, const wl_calib *cal, const char *cal_path, const char *out_dir,
                          const wl_process_opts *o, wl_process_result *res, wl_err *err);

/* The run page's analysis of one segment (wl_report_analyse_fn) by the
 * measure module: wl_measure_run_series for the yaw about the path and the
 * circle's residuals, wl_measure_periodogram for the spectrum.  Callers that
 * make run pages put it into their wl_report_scene (the plots of
 * wl_process_clip do; batch's merge does). */
wl_status wl_process_analyse_run(const wl_report_seg *in, wl_report_seg_analysis *out);

#endif
