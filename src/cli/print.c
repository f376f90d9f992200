/*
 * print.c: the lines that commands print about what a stage did, shared by
 * the stage's own command and `process`, so that both say the same.
 */
#include "cli/print.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "core/angle.h"
#include "core/csvio.h"
#include "core/numfmt.h"

void cli_print_track(const char *raw_path, const wl_track_summary *sum)
{
	const wl_track_stats *st = &sum->stats;
	int64_t det = sum->ok_rows - st->held_rows;
	printf("%s: %lld frames, %d robots, %lld of %lld rows ok (%.1f%%) and %lld held (%.1f%%), %lld "
	       "full-frame and %lld window searches; %lld lost rows: %lld searched, %lld out of view\n",
	       raw_path, (long long)sum->frames, sum->n_robots, (long long)det, (long long)sum->rows,
	       sum->rows ? 100.0 * det / sum->rows : 0.0, (long long)st->held_rows,
	       sum->rows ? 100.0 * st->held_rows / sum->rows : 0.0, (long long)st->full_scans,
	       (long long)st->window_scans, (long long)st->lost_rows, (long long)st->lost_searched,
	       (long long)st->lost_out_of_view);
	if (st->readout_n >= 30 && isfinite(st->readout_se_s))
		printf("%s: rolling shutter: the shear of %lld moving tags gives a readout of %.1f +- %.1f "
		       "ms "
		       "(+- %.1f ms from the tags' corner bias; used: %.1f ms)\n",
		       raw_path, (long long)st->readout_n, 1000 * st->readout_s, 1000 * st->readout_se_s,
		       1000 * st->readout_bias_s, 1000 * st->readout_used_s);
}

void cli_print_watch(const char *raw_path, const wl_watch_opts *watch, const wl_track_summary *sum)
{
	if (!watch || !watch->enabled)
		return;
	if (sum->camera_markers == 0)
		printf("%s: camera watch: the calibration names no floor markers (made from --points?): the "
		       "camera was not watched\n",
		       raw_path);
	else
		printf("%s: camera watch: %d checks in %.3f CPU-s, %d move%s%s\n", raw_path,
		       sum->camera_checks, sum->camera_watch_cpu_s, sum->camera_moves,
		       sum->camera_moves == 1 ? "" : "s",
		       isfinite(sum->suspect_from_t_s)
		               ? " (poses suspect from a move that could not be registered)"
		               : "");
}

void cli_print_clean_robot(const wl_clean_robot *rb)
{
	if (rb->rows_out == 0 && rb->measured == 0) {
		printf("robot %ld: no detections in %zu rows; not analysed\n", rb->id, rb->rows_in);
		return;
	}
	if (rb->trim_reason && strcmp(rb->trim_reason, "too-short") == 0) {
		printf("robot %ld: too short (%zu rows, %.3f s): not analysed\n", rb->id, rb->rows_in,
		       rb->t_last_s - rb->t_first_s);
		return;
	}
	if (rb->still) {
		printf("robot %ld: %s: %zu rows, never moved faster than %.4f m/s; not analysed\n", rb->id,
		       rb->trim_reason, rb->rows_in,
		       isfinite(rb->speed_threshold_mps) ? rb->speed_threshold_mps : 0.0);
		return;
	}
	printf("robot %ld: %zu rows (%zu measured, %zu filled, %zu outliers), %zu gaps (%zu filled, %zu "
	       "split); "
	       "start cut at %.3f s (%s",
	       rb->id, rb->rows_out, rb->measured, rb->filled, rb->outliers, rb->ngaps, rb->gaps_filled,
	       rb->gaps_split, rb->trim_s, rb->trim_reason);
	if (isfinite(rb->period_s))
		printf(", period %.3f s", rb->period_s);
	printf("); ");
	if (isfinite(rb->wall_s))
		printf("end cut at %.3f s (wall)", rb->wall_s);
	else
		printf("end not cut (%s)", rb->end_reason);
	printf("; %zu segment%s; noise %.2f mm, %.2f deg%s\n", rb->nsegments, rb->nsegments == 1 ? "" : "s",
	       rb->sigma_pos_m * 1e3, rb->sigma_heading_rad / WL_DEG,
	       rb->widen_pos || rb->widen_heading ? " (widened)" : "");
}

static void print_reasons(const wl_summary_measures *r)
{
	for (int i = 0; i < r->n_reasons; i++)
		printf("%s %s", i ? ";" : "", r->reasons[i]);
	putchar('\n');
}

/* One line for people: each value rounded to what its 95% interval supports
 * (core/numfmt.h); the files keep full precision. */
void cli_print_headline(const wl_summary_run *ro)
{
	const wl_summary_measures *r = &ro->m;
	const double *ci = r->curvature_ci95_per_m;
	char a[WL_NUMFMT_BUF], b[WL_NUMFMT_BUF], c[WL_NUMFMT_BUF];
	double kh = 0.5 * (ci[1] - ci[0]), rh = 0.5 * fabs(1 / ci[0] - 1 / ci[1]);
	printf("id %ld segment %ld (%s s): ", ro->id, ro->segment, wl_fmt_fixed(a, r->duration_s, 1));
	if (r->verdict == WL_VERDICT_REJECT) {
		/* a run the method could not follow is never printed as a number */
		printf("REJECT, no measures reported:");
		print_reasons(r);
		return;
	}
	if (r->straight)
		printf("straight (curvature %s /m at 95%%)", wl_numfmt_pm(a, r->curvature_per_m, kh));
	else
		printf("radius %s m %s (curvature %s /m at 95%%, arc %s deg)",
		       wl_numfmt_pm(a, r->radius_m, rh), r->radius_m > 0 ? "counter-clockwise" : "clockwise",
		       wl_numfmt_pm(b, r->curvature_per_m, kh), wl_fmt_fixed(c, r->arc_deg, 0));
	printf(", speed %s m/s", wl_numfmt_sig(a, r->mean_speed_mps, 3));
	if (isfinite(r->yaw_osc_freq_hz))
		printf(", yaw %s deg at %s Hz", wl_numfmt_sig(a, r->yaw_osc_amp_deg, 3),
		       wl_numfmt_sig(b, r->yaw_osc_freq_hz, 3));
	if (isfinite(r->sway_amp_m))
		printf(", sway %s mm", wl_numfmt_sig(a, 1000 * r->sway_amp_m, 2));
	printf(", tracked %s%%", wl_fmt_fixed(a, 100 * r->tracked_fraction, 0));
	if (r->verdict == WL_VERDICT_CHECK) {
		printf("; CHECK:");
		print_reasons(r);
	} else if (r->n_reasons > 0) { /* ok with notes (a camera move registered again) */
		printf("; %s:", wl_verdict_name(r->verdict));
		print_reasons(r);
	} else {
		printf("; %s\n", wl_verdict_name(r->verdict));
	}
}
