/*
 * pipeline.c: one clip through track, clean, measure and the plots (see
 * pipeline.h).  Each stage writes its file and the next reads it back
 * through src/formats/, exactly as the separate commands do: the cost is one
 * read of RAW.csv and one of CLEAN.csv, small beside decoding the video, and
 * the outputs cannot differ from a run of the commands by hand.
 */
#define _POSIX_C_SOURCE 200809L
#include "pipeline/pipeline.h"

#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/afile.h"
#include "report/report.h"

void wl_process_opts_init(wl_process_opts *o)
{
	memset(o, 0, sizeof *o);
	wl_track_opts_init(&o->track);
	wl_watch_opts_init(&o->watch);
	wl_clean_params_init(&o->clean);
	wl_measure_clean_opts_init(&o->measure);
	wl_measure_tolerances_init(&o->tol);
	o->budget = 1;
	o->plots = 1;
}

wl_status wl_process_budget_setup(const wl_calib *cal, const wl_track_opts *t,
                                  const wl_measure_tolerances *tol, wl_measure_clean_opts *m,
                                  wl_process_budget *b, wl_err *err)
{
	wl_status st;
	memset(b, 0, sizeof *b);
	if ((st = wl_measure_sys_create(cal, tol, &b->sys, err)))
		return st;
	if (t->n_robots > 0) {
		if (!(b->planes = calloc((size_t)t->n_robots, sizeof *b->planes)))
			return wl_err_set(err, WL_ENOMEM, "out of memory for the robots' planes");
		for (int i = 0; i < t->n_robots; i++) {
			b->planes[i].id = t->robots[i].id;
			b->planes[i].plane_height_m = t->robots[i].plane_height_m;
			b->planes[i].plane_height_sd_m = t->robots[i].plane_height_tol_m;
		}
	}
	m->sys = b->sys;
	m->cal = cal;
	m->plane_height_m = t->plane_height_m;
	m->plane_height_sd_m = tol->plane_height_sd_m;
	m->planes = b->planes;
	m->nplanes = t->n_robots > 0 ? (size_t)t->n_robots : 0;
	return WL_OK;
}

void wl_process_budget_release(wl_process_budget *b)
{
	if (!b)
		return;
	wl_measure_sys_destroy(b->sys);
	free(b->planes);
	memset(b, 0, sizeof *b);
}

static void hsv(FILE *f, const char *name, const wl_hsv_range *r)
{
	if (r->set)
		fprintf(f, " %s=%d,%d,%d..%d,%d,%d", name, r->lo[0], r->lo[1], r->lo[2], r->hi[0], r->hi[1],
		        r->hi[2]);
}

static void describe_track(FILE *f, const wl_track_opts *t)
{
	fprintf(f,
	        "track mode=%d family=%s plane=%.17g rescan=%.17g decimate=%.9g wdecimate=%.9g sigma=%.9g "
	        "sharpening=%.17g hamming=%d margin=%.17g margin1=%.17g edge=%d blob=%d..%d fill=%.17g "
	        "lost=%d "
	        "motion=%.17g restrict=%d hold=%.17g,%.17g readout=%.17g\n",
	        (int)t->mode, t->family, t->plane_height_m, t->rescan_s, (double)t->quad_decimate,
	        (double)t->window_decimate, (double)t->quad_sigma, t->decode_sharpening, t->max_hamming,
	        t->min_margin, t->min_margin_h1, t->edge_px, t->min_blob_px, t->max_blob_px, t->min_fill,
	        t->lost_after, t->motion_min_m, t->restrict_ids, t->hold_max_s, t->hold_min_score,
	        t->readout_s);
	for (int i = 0; i < t->n_robots; i++) {
		const wl_robot_spec *r = &t->robots[i];
		fprintf(f, "robot id=%d plane=%.17g tol=%.17g offset=%.17g body=%.17g", r->id,
		        r->plane_height_m, r->plane_height_tol_m, r->heading_offset_rad, r->body_diameter_m);
		hsv(f, "front", &r->front);
		hsv(f, "back", &r->back);
		fputc('\n', f);
	}
}

static void describe_clean(FILE *f, const wl_clean_params *c, int tank_rect)
{
	fprintf(f,
	        "clean smoother=%d model=%d sigma=%.17g,%.17g q=%.17g,%.17g gate=%.17g sg=%d,%d gap=%.17g "
	        "trim=%d,%.17g settle=%.17g,%.17g window=%.17g speed=%.17g segment=%.17g body=%.17g "
	        "wall=%.17g rate=%.17g tank=%d maxreject=%.17g",
	        (int)c->smoother, c->model_dim, c->sigma_pos_m, c->sigma_heading_rad, c->q_pos, c->q_heading,
	        c->gate_prob, c->sg_window, c->sg_order, c->max_gap_s, (int)c->trim, c->trim_s, c->settle_tol,
	        c->settle_yaw_tol_radps, c->default_window_s, c->min_speed_mps, c->min_segment_s,
	        c->body_diameter_m, c->wall_margin_m, c->rate_hz, tank_rect, c->max_reject_frac);
	for (int i = 0; i < c->n_outline; i++)
		fprintf(f, " %.17g,%.17g", c->outline_m[i][0], c->outline_m[i][1]);
	fputc('\n', f);
}

char *wl_process_opts_describe(const wl_process_opts *o)
{
	char *text = NULL;
	size_t len = 0;
	const wl_measure_opts *m = &o->measure.run;
	FILE *f = open_memstream(&text, &len);
	if (!f)
		return NULL;
	describe_track(f, &o->track); /* not the decoder threads: they do not change the outputs */
	fprintf(f, "watch enabled=%d period=%.17g threshold=%.17g markers=%d\n", o->watch.enabled,
	        o->watch.period_s, o->watch.threshold_px, o->watch.min_markers);
	describe_clean(f, &o->clean, o->tank_rect);
	fprintf(f, "measure arc=%.17g body=%.17g osc=%.17g..%.17g commanded=%.17g plots=%d\n", m->min_arc_deg,
	        m->body_diameter_m, m->osc_fmin_hz, m->osc_fmax_hz, o->measure.commanded_period_s, o->plots);
	fprintf(f, "budget on=%d plane=%.17g water=%.17g focal=%.17g principal=%.17g jackknife=%d\n",
	        o->budget, o->tol.plane_height_sd_m, o->tol.water_depth_sd_m, o->tol.focal_sd_frac,
	        o->tol.principal_sd_frac, o->tol.calib_jackknife);
	if (fclose(f) != 0) {
		free(text);
		return NULL;
	}
	return text;
}

void wl_process_result_release(wl_process_result *r)
{
	if (!r)
		return;
	wl_clean_result_release(&r->clean);
	wl_summary_release(&r->summary);
	memset(r, 0, sizeof *r);
	wl_summary_init(&r->summary);
}

typedef struct {
	char raw[PATH_MAX], clean[PATH_MAX], sidecar[PATH_MAX], summary[PATH_MAX], trail[PATH_MAX];
} paths;

static wl_status make_paths(const char *out_dir, paths *p, wl_err *err)
{
	size_t n = strlen(out_dir);
	if (n + 1 + sizeof WL_PROCESS_SUMMARY > PATH_MAX)
		return wl_err_set(err, WL_EINVAL,
		                  "'%.80s...': the output folder's path is too long: use a shorter one",
		                  out_dir);
	snprintf(p->raw, sizeof p->raw, "%s/%s", out_dir, WL_PROCESS_RAW);
	snprintf(p->clean, sizeof p->clean, "%s/%s", out_dir, WL_PROCESS_CLEAN);
	snprintf(p->sidecar, sizeof p->sidecar, "%s/%s", out_dir, WL_PROCESS_SIDECAR);
	snprintf(p->summary, sizeof p->summary, "%s/%s", out_dir, WL_PROCESS_SUMMARY);
	snprintf(p->trail, sizeof p->trail, "%s/%s", out_dir, WL_PROCESS_TRAIL);
	return WL_OK;
}

static wl_status track(const char *clip, const wl_calib *cal, const char *cal_path, const paths *p,
                       const wl_process_opts *o, wl_process_result *res, wl_err *err)
{
	wl_track_run_opts ro;
	wl_watch_opts wo = o->watch;
	memset(&ro, 0, sizeof ro);
	snprintf(wo.family, sizeof wo.family, "%s", o->track.family);
	ro.watch = &wo;
	ro.clip = clip;
	ro.raw_path = p->raw;
	ro.trail_png = o->plots ? p->trail : NULL; /* the QC picture the run page shows */
	ro.decode_threads = o->decode_threads;
	ro.queue_frames = 4;
	ro.diag = o->diag;
	return wl_track_run(&ro, &o->track, cal, cal_path, &res->track, err);
}

/* The clean stage with the calibration's tank outline (unless the options
 * give one), recorded as coming from CAL.json. */
static wl_status clean(const wl_calib *cal, const char *cal_path, const paths *p, const wl_process_opts *o,
                       wl_process_result *res, wl_err *err)
{
	wl_clean_params cp = o->clean;
	wl_clean_raw *raw = NULL;
	wl_clean_source src;
	wl_status st;
	if (cp.n_outline == 0 && !o->tank_rect) {
		cp.n_outline = cal->n_outline;
		memcpy(cp.outline_m, cal->outline_m, sizeof cp.outline_m);
	}
	if ((st = wl_clean_raw_read(p->raw, &raw, err)) ||
	    (st = wl_clean_run(raw, &cp, o->diag, &res->clean, err)))
		goto out;
	wl_clean_source_init(&src, raw);
	if (o->tank_rect) {
		src.tank_rect = 1;
	} else {
		src.cal_path = cal_path;
		src.cal_sha256 = cal->sha256_hex;
	}
	st = wl_clean_write(p->clean, p->sidecar, &cp, &src, &res->clean, err);
out:
	/* the rows are in clean.csv now; the per-robot records are what callers show */
	free(res->clean.rows);
	res->clean.rows = NULL;
	res->clean.nrows = 0;
	wl_clean_raw_destroy(raw);
	return st;
}

static wl_status measure(const wl_calib *cal, const paths *p, const wl_process_opts *o,
                         wl_process_result *res, wl_err *err)
{
	wl_measure_clean_opts mo = o->measure;
	wl_process_budget b = {0};
	wl_status st = WL_OK;
	mo.diag = o->diag;
	mo.clean_sidecar = p->sidecar; /* the verdict reads what clean did */
	wl_summary_release(&res->summary);
	if (o->budget)
		st = wl_process_budget_setup(cal, &o->track, &o->tol, &mo, &b, err);
	if (!st && !(st = wl_measure_clean(p->clean, &mo, &res->summary, err)))
		st = wl_summary_write(p->summary, NULL, &res->summary, err);
	wl_process_budget_release(&b);
	return st;
}

static wl_status plots(const wl_calib *cal, const char *out_dir, const wl_process_opts *o, wl_err *err)
{
	wl_report_scene_buf *sb = calloc(1, sizeof *sb);
	wl_cal_outline outline;
	wl_status st;
	if (!sb)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the plots of '%s'", out_dir);
	outline.n = cal->n_outline;
	memcpy(outline.xy, cal->outline_m, sizeof outline.xy);
	wl_report_scene_from_calib(&outline, cal->points, cal->n_points, sb);
	if (isfinite(o->measure.run.body_diameter_m))
		sb->scene.body_diameter_m = o->measure.run.body_diameter_m;
	sb->scene.analyse = wl_process_analyse_run;
	sb->scene.clip_name = o->clip_name;
	sb->scene.nparams = o->nparams;
	sb->scene.param_names = o->param_names;
	sb->scene.param_values = o->param_values;
	st = wl_report_clip_plots(out_dir, &sb->scene, err);
	wl_report_scene_release(sb);
	free(sb);
	return st;
}

wl_status wl_process_analyse_run(const wl_report_seg *in, wl_report_seg_analysis *out)
{
	wl_measure_input mi = {0}; /* no detections' own headings: the smoothed ones */
	wl_measure_opts opt;
	wl_measure_result res;
	wl_status st;
	mi.n = in->n, mi.t_s = in->t_s, mi.x_m = in->x_m, mi.y_m = in->y_m, mi.heading_rad = in->heading_rad;
	mi.speed_mps = in->speed_mps, mi.yaw_rate_radps = in->yaw_rate_radps, mi.measured = in->measured;
	wl_measure_opts_init(&opt);
	if (isfinite(in->min_arc_deg))
		opt.min_arc_deg = in->min_arc_deg;
	out->nbins = 0;
	if ((st = wl_measure_run_series(&mi, &opt, &res, out->yaw_rad, out->offset_m, NULL)))
		return st;
	out->n_used = res.n_used;
	out->yaw_peak_hz = res.yaw_osc_freq_hz;
	if (wl_measure_periodogram(in->t_s, out->yaw_rad, in->n, out->f_hz, out->power, out->cap, &out->nbins,
	                           NULL) != WL_OK)
		out->nbins = 0; /* the residuals without a spectrum */
	return WL_OK;
}

wl_status wl_process_clip(const char *clip, const wl_calib *cal, const char *cal_path, const char *out_dir,
                          const wl_process_opts *o, wl_process_result *res, wl_err *err)
{
	paths p;
	wl_status st;
	memset(res, 0, sizeof *res);
	wl_summary_init(&res->summary);
	if ((st = make_paths(out_dir, &p, err)) || (st = wl_mkdirs(out_dir, err)))
		return st;
	res->stage_failed = 1;
	if ((st = track(clip, cal, cal_path, &p, o, res, err)))
		return st;
	res->stage_failed = 2;
	if ((st = clean(cal, cal_path, &p, o, res, err)))
		return st;
	res->stage_failed = 3;
	if ((st = measure(cal, &p, o, res, err)))
		return st;
	res->stage_failed = 4;
	if (o->plots && (st = plots(cal, out_dir, o, err)))
		return st;
	res->stage_failed = 0;
	return WL_OK;
}
