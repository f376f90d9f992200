/*
 * clipopts.c: what one clip of a batch runs with: the batch's options with
 * the option cells of the clip's manifest row applied (formats/manifest.h),
 * and the default clip function, which loads the clip's CAL.json once and
 * runs the pipeline (pipeline/pipeline.h) in the worker.
 */
#define _POSIX_C_SOURCE 200809L
#include "batch/batch.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "batch/batch_priv.h"

const char *const wl_batch_outputs[] = {
        WL_PROCESS_RAW, WL_PROCESS_CLEAN, WL_PROCESS_SIDECAR, WL_PROCESS_SUMMARY, "path_m.svg",
        "path_m.png",   "heading.svg",    "heading.png",      BATCH_LOG,          NULL};

wl_status wl_batch_clip_opts(const wl_process_opts *base, const wl_manifest_opts *row, wl_process_opts *out,
                             wl_err *err)
{
	if (base)
		*out = *base;
	else
		wl_process_opts_init(out);
	if (!row)
		return WL_OK;
	if (row->mode != WL_MF_MODE_UNSET)
		out->track.mode = row->mode == WL_MF_MODE_COLOUR ? WL_TRACK_COLOUR : WL_TRACK_TAG;
	if (row->family)
		snprintf(out->track.family, sizeof out->track.family, "%s", row->family);
	if (isfinite(row->plane_height_m))
		out->track.plane_height_m = row->plane_height_m;
	if (isfinite(row->body_diameter_m)) {
		out->clean.body_diameter_m = row->body_diameter_m;
		out->measure.run.body_diameter_m = row->body_diameter_m;
	}
	if (isfinite(row->commanded_period_s))
		out->measure.commanded_period_s = row->commanded_period_s;
	if (row->trim != WL_MF_TRIM_UNSET) {
		out->clean.trim = row->trim == WL_MF_TRIM_FIXED  ? WL_TRIM_FIXED
		                  : row->trim == WL_MF_TRIM_NONE ? WL_TRIM_NONE
		                                                 : WL_TRIM_AUTO;
		out->clean.trim_s = row->trim_s;
	}
	if (row->smoother != WL_MF_SMOOTHER_UNSET)
		out->clean.smoother = row->smoother == WL_MF_SMOOTHER_SG ? WL_CLEAN_SG : WL_CLEAN_RTS;
	if (row->robots) {
		/* the row's robots replace the batch's */
		out->track.n_robots = 0;
		out->track.restrict_ids = 0;
		out->track.robots_path[0] = '\0';
		return wl_track_load_robots(row->robots, &out->track, err);
	}
	return WL_OK;
}

/* The default clip function: the clip's CAL.json read once, then the
 * pipeline with the worker's diagnostics. */
wl_status batch_pipeline_clip(const wl_batch_job *job, void *ctx, wl_err *err)
{
	wl_process_opts o = *job->opts;
	wl_process_result res;
	wl_calib *cal = malloc(sizeof *cal);
	wl_status st;
	(void)ctx;
	if (!cal)
		return wl_err_set(err, WL_ENOMEM, "out of memory loading '%s'", job->cal_path);
	if (!job->cal_path)
		st = wl_err_set(err, WL_EINVAL, "%s: no calibration: give --cal or a 'cal' cell",
		                job->clip_rel);
	else if (!(st = wl_calib_load(job->cal_path, cal, err))) {
		o.diag = job->diag;
		st = wl_process_clip(job->clip_path, cal, job->cal_path, job->out_dir, &o, &res, err);
		batch_worker_result(job, st ? 0 : res.track.frames, st ? 0 : res.summary.nruns);
		wl_process_result_release(&res);
	}
	free(cal);
	return st;
}
