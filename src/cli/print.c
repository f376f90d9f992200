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

void cli_print_track(const char *raw_path, const wl_track_summary *sum)
{
	printf("%s: %lld frames, %d robots, %lld of %lld rows ok (%.1f%%), %lld full-frame and %lld window "
	       "searches\n",
	       raw_path, (long long)sum->frames, sum->n_robots, (long long)sum->ok_rows, (long long)sum->rows,
	       sum->rows ? 100.0 * sum->ok_rows / sum->rows : 0.0, (long long)sum->stats.full_scans,
	       (long long)sum->stats.window_scans);
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

void cli_print_headline(const wl_summary_run *ro)
{
	const wl_summary_measures *r = &ro->m;
	char a[WL_NUMBUF], b[WL_NUMBUF], c[WL_NUMBUF], d[WL_NUMBUF], e[WL_NUMBUF];
	printf("id %ld segment %ld (%s s): ", ro->id, ro->segment, wl_fmt_fixed(a, r->duration_s, 1));
	if (r->verdict == WL_VERDICT_REJECT) {
		/* a run the method could not follow is never printed as a number */
		printf("REJECT, no measures reported:");
		print_reasons(r);
		return;
	}
	if (r->straight)
		printf("straight (curvature %s /m, 95%% [%s, %s])", wl_fmt_fixed(a, r->curvature_per_m, 4),
		       wl_fmt_fixed(b, r->curvature_ci95_per_m[0], 4),
		       wl_fmt_fixed(c, r->curvature_ci95_per_m[1], 4));
	else
		printf("radius %s m %s (curvature %s /m, 95%% [%s, %s], arc %s deg)",
		       wl_fmt_fixed(a, r->radius_m, 3), r->radius_m > 0 ? "counter-clockwise" : "clockwise",
		       wl_fmt_fixed(b, r->curvature_per_m, 4), wl_fmt_fixed(c, r->curvature_ci95_per_m[0], 4),
		       wl_fmt_fixed(d, r->curvature_ci95_per_m[1], 4), wl_fmt_fixed(e, r->arc_deg, 0));
	printf(", speed %s m/s", wl_fmt_fixed(a, r->mean_speed_mps, 3));
	if (isfinite(r->yaw_osc_freq_hz))
		printf(", yaw %s deg at %s Hz", wl_fmt_fixed(a, r->yaw_osc_amp_deg, 1),
		       wl_fmt_fixed(b, r->yaw_osc_freq_hz, 2));
	if (isfinite(r->sway_amp_m))
		printf(", sway %s mm", wl_fmt_fixed(a, 1000 * r->sway_amp_m, 1));
	printf(", tracked %s%%", wl_fmt_fixed(a, 100 * r->tracked_fraction, 0));
	if (r->verdict == WL_VERDICT_CHECK) {
		printf("; CHECK:");
		print_reasons(r);
	} else {
		printf("; %s\n", wl_verdict_name(r->verdict));
	}
}
