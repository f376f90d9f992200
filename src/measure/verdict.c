/*
 * verdict.c: a verdict on every run (see measure.h, wl_measure_verdict):
 * "ok", "check" or "reject", with short reasons a person can act on.  The
 * rules and their thresholds are documented in docs/measure.md; they are
 * common practice of ours (no published source), chosen so that a run the
 * method could not follow is never reported as a plain number.
 */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "measure/measure.h"

/* Thresholds (docs/measure.md, "Verdict"). */
#define OUTLIER_CHECK 0.01 /* share of a run's rows rejected as outliers */
#define OUTLIER_REJECT 0.10
#define TRACKED_CHECK 0.90 /* tracked fraction */
#define TRACKED_REJECT 0.50
#define TRIM_CHECK 0.5   /* share of the robot's track cut at its start */
#define ARC_CHECK_DEG 30 /* a radius from a shorter arc hangs on the noise */
#define RESID_CHECK 5.0  /* fit residual over what noise and sway explain */
#define RESID_REJECT 20.0
#define RESID_FLOOR_M 0.002    /* residuals below this are never a concern */
#define DOMINANT_SHARE 0.8     /* one systematic input's share of the curvature's variance */
#define DOMINANT_REL 0.01      /* ... when the interval's half-width exceeds this of |curvature| */
#define REREG_RMS 2.0          /* a re-registered pose held: its RMS <= this x the watch threshold */
#define WATCH_THRESHOLD_PX 0.5 /* the watch's default threshold, for a record without one */
#define SUSPECT_REJECT 0.5     /* share of the run's span whose poses are suspect */

void wl_verdict_input_init(wl_verdict_input *v)
{
	memset(v, 0, sizeof *v);
	v->outlier_share = v->trim_share = v->noise_pos_m = NAN;
	v->t0_s = v->t1_s = NAN;
}

static void reason(wl_measure_result *r, wl_verdict level, const char *fmt, ...)
        __attribute__((format(printf, 3, 4)));

static void reason(wl_measure_result *r, wl_verdict level, const char *fmt, ...)
{
	va_list ap;
	if (level > r->verdict)
		r->verdict = level;
	if (r->n_reasons >= WL_SUMMARY_MAX_REASONS)
		return;
	va_start(ap, fmt);
	vsnprintf(r->reasons[r->n_reasons++], WL_SUMMARY_REASON_LEN, fmt, ap);
	va_end(ap);
}

static const char *source_words(wl_budget_source s)
{
	switch (s) {
	case WL_BS_CALIBRATION:
		return "the calibration's own uncertainty";
	case WL_BS_PLANE_HEIGHT:
		return "the marker plane height's tolerance";
	case WL_BS_INTRINSICS:
		return "the assumed focal length or principal point";
	case WL_BS_WATER_DEPTH:
		return "the water depth's tolerance";
	default:
		return "the fit";
	}
}

int wl_verdict_move_held(const wl_rawside *c, int i, double t_s)
{
	const wl_rawside_move *mv = &c->moves[i];
	double thr = isfinite(c->threshold_px) && c->threshold_px > 0 ? c->threshold_px : WATCH_THRESHOLD_PX;
	if (!mv->reregistered || !isfinite(mv->rms_px) || mv->rms_px > REREG_RMS * thr)
		return 0;
	return isnan(t_s) || (t_s <= mv->t_s && (!isfinite(mv->last_still_t_s) || t_s > mv->last_still_t_s));
}

/* The camera watch's moves over the run's span (docs/measure.md, "Verdict"):
 * a move the watch registered again is a note (verdict unchanged) when the
 * new pose fits the floor markers as well as a still camera's does, a check
 * when it does not; poses marked suspect (a move that too few markers could
 * register) are a check, a reject when they are half the run or more. */
static void camera_reasons(const wl_verdict_input *v, wl_measure_result *r)
{
	const wl_rawside *c = v->camera;
	double thr, held_px, sus, span = v->t1_s - v->t0_s;
	if (!c || !c->enabled || !isfinite(v->t0_s) || !isfinite(v->t1_s))
		return;
	thr = isfinite(c->threshold_px) && c->threshold_px > 0 ? c->threshold_px : WATCH_THRESHOLD_PX;
	held_px = REREG_RMS * thr;
	for (int i = 0; i < c->n_moves; i++) {
		const wl_rawside_move *mv = &c->moves[i];
		double a = isfinite(mv->last_still_t_s) ? mv->last_still_t_s : -INFINITY;
		if (!mv->reregistered || !(mv->t_s >= v->t0_s && a <= v->t1_s))
			continue;
		if (wl_verdict_move_held(c, i, NAN))
			reason(r, WL_VERDICT_OK,
			       "note: the camera moved between %.2f s and %.2f s (turned %.2f deg, centre "
			       "%.1f mm) and was registered again from %d markers at %.2f px RMS; poses in "
			       "between may be off",
			       isfinite(mv->last_still_t_s) ? mv->last_still_t_s : 0.0, mv->t_s, mv->turn_deg,
			       mv->centre_shift_mm, mv->markers, mv->rms_px);
		else if (isfinite(mv->rms_px))
			reason(r, WL_VERDICT_CHECK,
			       "the camera moved at %.2f s and its new pose fits the floor markers to only "
			       "%.2f px RMS (limit %.2f): calibrate again from the clip after the move "
			       "(calibrate --at %.1f)",
			       mv->t_s, mv->rms_px, held_px, ceil(10 * mv->t_s) / 10);
		else
			reason(r, WL_VERDICT_CHECK,
			       "the camera moved at %.2f s and was registered again, but how well is not "
			       "recorded: run clean and measure again with this version",
			       mv->t_s);
	}
	sus = wl_rawside_suspect_s(c, v->t0_s, v->t1_s);
	if (sus > 0) {
		double from = fmax(v->t0_s, c->suspect_from_t_s), seen = c->suspect_from_t_s;
		for (int i = 0; i < c->n_moves; i++) /* the check that saw the move */
			if (!c->moves[i].reregistered && c->moves[i].t_s >= c->suspect_from_t_s) {
				seen = c->moves[i].t_s;
				break;
			}
		reason(r, span > 0 && sus >= SUSPECT_REJECT * span ? WL_VERDICT_REJECT : WL_VERDICT_CHECK,
		       "%.1f s of the run from %.2f s are suspect: the camera moved and too few floor "
		       "markers were in view to register it: keep them in view, or calibrate again "
		       "after the move (calibrate --at %.1f)",
		       sus, from, ceil(10 * seen) / 10);
	}
}

void wl_measure_verdict(const wl_verdict_input *v, wl_measure_result *r)
{
	const wl_summary_budget *b = &r->budget[WL_BM_CURVATURE];
	r->verdict = WL_VERDICT_OK;
	r->n_reasons = 0;
	if (v->outlier_share > OUTLIER_REJECT)
		reason(r, WL_VERDICT_REJECT, "%.0f%% of rows rejected as outliers", 100 * v->outlier_share);
	else if (v->outlier_share > OUTLIER_CHECK)
		reason(r, WL_VERDICT_CHECK, "%.1f%% of rows rejected as outliers", 100 * v->outlier_share);
	if (r->tracked_fraction < TRACKED_REJECT)
		reason(r, WL_VERDICT_REJECT, "tracked in only %.0f%% of the rows", 100 * r->tracked_fraction);
	else if (r->tracked_fraction < TRACKED_CHECK)
		reason(r, WL_VERDICT_CHECK, "tracked in %.0f%% of the rows", 100 * r->tracked_fraction);
	if (v->trim_share > TRIM_CHECK)
		reason(r, WL_VERDICT_CHECK, "the start trim took %.0f%% of the robot's track",
		       100 * v->trim_share);
	if (v->not_settled)
		reason(r, WL_VERDICT_CHECK, "the robot never settled to steady motion");
	camera_reasons(v, r);
	if (isfinite(r->fit_rms_m) && r->fit_rms_m > RESID_FLOOR_M) {
		double noise = isfinite(v->noise_pos_m) ? v->noise_pos_m : 0.001,
		       sway = isfinite(r->sway_amp_m) ? r->sway_amp_m : 0,
		       expect = sqrt(noise * noise + 0.5 * sway * sway), ratio = r->fit_rms_m / expect;
		if (ratio > RESID_REJECT)
			reason(r, WL_VERDICT_REJECT,
			       "the path is far from one %s: fit residual %.1f mm against %.1f mm of noise "
			       "and sway",
			       r->straight ? "line" : "circle", 1e3 * r->fit_rms_m, 1e3 * expect);
		else if (ratio > RESID_CHECK)
			reason(r, WL_VERDICT_CHECK,
			       "the path is not one %s: fit residual %.1f mm against %.1f mm of noise and "
			       "sway",
			       r->straight ? "line" : "circle", 1e3 * r->fit_rms_m, 1e3 * expect);
	}
	if (!r->straight && r->arc_deg < ARC_CHECK_DEG)
		reason(r, WL_VERDICT_CHECK, "an arc of %.0f deg is too short for a reliable radius",
		       r->arc_deg);
	if (!r->straight && isfinite(b->total_se) && b->total_se > 0 &&
	    1.959964 * b->total_se > DOMINANT_REL * fabs(r->curvature_per_m)) {
		for (int s = WL_BS_CALIBRATION; s < WL_BS_N; s++)
			if (isfinite(b->se[s]) &&
			    b->se[s] * b->se[s] > DOMINANT_SHARE * b->total_se * b->total_se)
				reason(r, WL_VERDICT_CHECK,
				       "%s makes %.0f%% of the curvature's uncertainty (95%% interval "
				       "+-%.1f%%): "
				       "narrow it",
				       source_words((wl_budget_source)s),
				       100 * b->se[s] * b->se[s] / (b->total_se * b->total_se),
				       100 * 1.959964 * b->total_se / fabs(r->curvature_per_m));
	}
}
