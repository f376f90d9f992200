/*
 * cmd_probe.c: `wakeline probe CLIP`: what a clip holds, found by decoding
 * every frame: codec, sizes, pixel format, rotation, frame count, frame
 * intervals (variable frame rate), and any damage with its times.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "core/afile.h"
#include "core/csvio.h"
#include "core/jsonio.h"
#include "decode/decode.h"

const char cmd_probe_summary[] = "decode a clip and report its format, frame times and damage";

static const char HEAD[] = "usage: wakeline probe [options] CLIP\n"
                           "\n"
                           "Decodes every frame of CLIP and reports the codec, coded and displayed size,\n"
                           "pixel format and range, rotation, the container's duration, the number of\n"
                           "frames decoded, the mean/min/max interval between frames, whether the frame\n"
                           "rate is variable, and any damage (packets or frames the decoder rejected or\n"
                           "flagged) with its frame and time.  Times are seconds since the first frame;\n"
                           "the rotation is in degrees counter-clockwise, in (-180, 180] as ffprobe\n"
                           "shows the display matrix (a phone's portrait clip is -90).\n"
                           "\n";
static const char TAIL[] = "\n"
                           "The frame rate is called variable when the longest and shortest intervals\n"
                           "differ by more than 1.5 ms or 2% of the mean interval.\n"
                           "\n"
                           "exit status: 0 the clip decoded without damage; 1 damage was found (the\n"
                           "report is still printed) or the clip cannot be read; 2 usage error.\n";

typedef struct {
	int64_t n;
	double first_t, last_t;
	double sum_dt, min_dt, max_dt;
	int64_t corrupt, guessed;
} stats;

static void stats_add(stats *s, const wl_frame *f)
{
	if (s->n > 0) {
		double dt = f->t_s - s->last_t;
		s->sum_dt += dt;
		if (s->n == 1 || dt < s->min_dt)
			s->min_dt = dt;
		if (s->n == 1 || dt > s->max_dt)
			s->max_dt = dt;
	} else {
		s->first_t = f->t_s;
	}
	s->last_t = f->t_s;
	s->corrupt += f->corrupt != 0;
	s->guessed += f->time_guessed != 0;
	s->n++;
}

static double mean_dt(const stats *s)
{
	return s->n > 1 ? s->sum_dt / (double)(s->n - 1) : NAN;
}

static int is_vfr(const stats *s)
{
	double m = mean_dt(s), tol;
	if (s->n < 3)
		return 0;
	tol = fmax(0.0015, 0.02 * m);
	return s->max_dt - s->min_dt > tol;
}

/* The display rotation as the display matrix means it and ffprobe shows
 * it: counter-clockwise degrees in (-180, 180], so that a phone's portrait
 * clip is -90 (the decoder keeps 0, 90, 180, 270). */
static int display_rotation(int rotation_deg)
{
	return rotation_deg > 180 ? rotation_deg - 360 : rotation_deg;
}

/* Rounds to the microsecond so that the JSON does not show binary noise. */
static double us(double t)
{
	return isfinite(t) ? round(t * 1e6) / 1e6 : NAN;
}

static cJSON *json_report(const wl_decoder *dec, const stats *s)
{
	const wl_video_info *in = wl_decoder_info(dec);
	cJSON *root = cJSON_CreateObject(), *arr;
	const wl_damage *dm;
	int wd, hd, nd;

	wl_orient_displayed_size(in->rotation_deg, in->width_px, in->height_px, &wd, &hd);
	cJSON_AddStringToObject(root, "file", in->path);
	cJSON_AddStringToObject(root, "codec", in->codec);
	cJSON_AddNumberToObject(root, "width_px", in->width_px);
	cJSON_AddNumberToObject(root, "height_px", in->height_px);
	cJSON_AddNumberToObject(root, "displayed_width_px", wd);
	cJSON_AddNumberToObject(root, "displayed_height_px", hd);
	cJSON_AddNumberToObject(root, "rotation_deg", display_rotation(in->rotation_deg));
	cJSON_AddStringToObject(root, "pix_fmt", in->pix_fmt);
	cJSON_AddNumberToObject(root, "bit_depth", in->bit_depth);
	cJSON_AddBoolToObject(root, "full_range", in->full_range);
	cJSON_AddNumberToObject(root, "duration_s", us(in->duration_s));
	cJSON_AddNumberToObject(root, "frames", (double)s->n);
	cJSON_AddNumberToObject(root, "frames_hint", (double)in->frames_hint);
	cJSON_AddNumberToObject(root, "first_pts_s", us(in->first_pts_s));
	cJSON_AddNumberToObject(root, "last_t_s", us(s->n ? s->last_t : NAN));
	cJSON_AddNumberToObject(root, "interval_mean_s", us(mean_dt(s)));
	cJSON_AddNumberToObject(root, "interval_min_s", us(s->n > 1 ? s->min_dt : NAN));
	cJSON_AddNumberToObject(root, "interval_max_s", us(s->n > 1 ? s->max_dt : NAN));
	cJSON_AddBoolToObject(root, "variable_frame_rate", is_vfr(s));
	cJSON_AddNumberToObject(root, "corrupt_frames", (double)s->corrupt);
	cJSON_AddNumberToObject(root, "guessed_times", (double)s->guessed);
	cJSON_AddNumberToObject(root, "damage_count", (double)wl_decoder_damage_count(dec));
	arr = cJSON_AddArrayToObject(root, "damage");
	dm = wl_decoder_damage(dec, &nd);
	for (int i = 0; i < nd; i++) {
		cJSON *o = cJSON_CreateObject();
		cJSON_AddNumberToObject(o, "frame", (double)dm[i].frame_index);
		cJSON_AddNumberToObject(o, "t_s", us(dm[i].t_s));
		cJSON_AddStringToObject(o, "what", dm[i].what);
		cJSON_AddItemToArray(arr, o);
	}
	return root;
}

static const char *fx(char *buf, double v, int dec)
{
	return isfinite(v) ? wl_fmt_fixed(buf, v, dec) : "-";
}

static void print_damage(const wl_decoder *dec)
{
	char b[WL_NUMBUF];
	int nd;
	const wl_damage *dm = wl_decoder_damage(dec, &nd);
	long long total = (long long)wl_decoder_damage_count(dec);

	if (total == 0) {
		printf("damage         none\n");
		return;
	}
	printf("damage         %lld problem%s%s\n", total, total == 1 ? "" : "s",
	       total > nd ? " (the first listed)" : "");
	for (int i = 0; i < nd; i++) {
		if (dm[i].frame_index >= 0)
			printf("  frame %lld", (long long)dm[i].frame_index);
		else
			printf("  frame ?");
		printf(" at %s s: %s\n", isfinite(dm[i].t_s) ? wl_fmt_fixed(b, dm[i].t_s, 6) : "?",
		       dm[i].what);
	}
}

static void text_report(const wl_decoder *dec, const stats *s)
{
	const wl_video_info *in = wl_decoder_info(dec);
	char b1[WL_NUMBUF], b2[WL_NUMBUF], b3[WL_NUMBUF];
	int wd, hd;
	double m = mean_dt(s);

	wl_orient_displayed_size(in->rotation_deg, in->width_px, in->height_px, &wd, &hd);
	printf("file           %s\n", in->path);
	printf("codec          %s\n", in->codec);
	printf("pixel format   %s (%d-bit, %s range)\n", in->pix_fmt, in->bit_depth,
	       in->full_range ? "full" : "limited");
	printf("coded size     %dx%d px\n", in->width_px, in->height_px);
	printf("rotation       %d deg counter-clockwise (displayed %dx%d px)\n",
	       display_rotation(in->rotation_deg), wd, hd);
	printf("duration       %s s (container)\n", fx(b1, in->duration_s, 3));
	printf("frames         %lld decoded (container lists %lld)\n", (long long)s->n,
	       (long long)in->frames_hint);
	printf("first frame    at %s s in the container; times below are from it\n",
	       fx(b1, in->first_pts_s, 6));
	printf("last frame     at %s s\n", fx(b1, s->n ? s->last_t : NAN, 6));
	printf("interval       mean %s s, min %s s, max %s s\n", fx(b1, m, 6),
	       fx(b2, s->n > 1 ? s->min_dt : NAN, 6), fx(b3, s->n > 1 ? s->max_dt : NAN, 6));
	if (s->n > 1)
		printf("frame rate     %s, %s fps on average\n", is_vfr(s) ? "variable" : "constant",
		       fx(b1, 1.0 / m, 3));
	if (s->guessed)
		printf("timestamps     %lld frames had none; their times are extrapolated\n",
		       (long long)s->guessed);
	printf("corrupt frames %lld\n", (long long)s->corrupt);
	print_damage(dec);
}

static wl_status write_frame_row(wl_csv_writer *w, const wl_frame *f)
{
	wl_csvw_int(w, f->index);
	wl_csvw_num(w, f->t_s, 6);
	wl_csvw_int(w, f->corrupt ? 1 : 0);
	wl_csvw_int(w, f->time_guessed ? 1 : 0);
	wl_csvw_end(w);
	return WL_OK;
}

static wl_status run(const char *clip, const char *frames_csv, int threads, int quiet, int json, int *damaged,
                     wl_err *err)
{
	static const char *const header[] = {"frame", "t_s", "corrupt", "time_guessed", NULL};
	wl_decoder *dec = NULL;
	wl_afile *af = NULL;
	wl_csv_writer w;
	cli_progress prog;
	stats s = {0};
	const wl_frame *f;
	wl_status st;

	st = wl_decoder_open(clip, 0, threads, &dec, err);
	if (st != WL_OK)
		goto out;
	if (frames_csv) {
		st = wl_afile_open(frames_csv, &af, err);
		if (st != WL_OK)
			goto out;
		wl_csvw_init(&w, wl_afile_fp(af));
		wl_csvw_header(&w, header);
	}
	cli_progress_init(&prog, quiet);
	for (;;) {
		st = wl_decoder_next(dec, &f, err);
		if (st != WL_OK || !f)
			break;
		stats_add(&s, f);
		if (af)
			write_frame_row(&w, f);
		cli_progress_update(&prog, "probe: %lld frames, %.1f s", (long long)s.n, f->t_s);
	}
	cli_progress_done(&prog);
	if (st != WL_OK)
		goto out;
	if (af) {
		st = wl_afile_commit(af, err);
		af = NULL;
		if (st != WL_OK)
			goto out;
	}
	if (json) {
		cJSON *root = json_report(dec, &s);
		char *text = cJSON_Print(root);
		if (text)
			printf("%s\n", text);
		cJSON_free(text);
		cJSON_Delete(root);
		if (!text)
			st = wl_err_set(err, WL_ENOMEM, "out of memory printing the report");
	} else {
		text_report(dec, &s);
	}
	*damaged = wl_decoder_damage_count(dec) > 0;
	if (*damaged) {
		int nd;
		const wl_damage *dm = wl_decoder_damage(dec, &nd);
		char b[WL_NUMBUF];
		wl_err_set(err, WL_EDECODE,
		           "%s: frame %lld at %s s: %s (%lld damage reports in all): the clip is damaged; "
		           "frames around these times may be wrong",
		           clip, (long long)dm[0].frame_index,
		           isfinite(dm[0].t_s) ? wl_fmt_fixed(b, dm[0].t_s, 3) : "?", dm[0].what,
		           (long long)wl_decoder_damage_count(dec));
	}
out:
	wl_afile_abort(af);
	wl_decoder_destroy(dec);
	return st;
}

int cmd_probe(int argc, char **argv)
{
	const char *frames_csv = NULL;
	int json = 0, quiet = 0, threads = 0, damaged = 0, rc, first;
	wl_err err = {0};
	const cli_opt tab[] = {
	        CLI_OPT_FLAG("json", 0, "print the report as JSON on standard output", &json),
	        CLI_OPT_STR("frames", 0, "FILE",
	                    "also write one CSV row per frame: frame,t_s,corrupt,time_guessed", &frames_csv),
	        CLI_OPT_INT("threads", 0, "N", "decoding threads (default 0: every core)", &threads, 0, 1024),
	        CLI_OPT_FLAG("quiet", 'q', "no progress line", &quiet), CLI_OPT_END};
	const cli_opt *tables[] = {tab, NULL};
	if ((rc = cli_parse("probe", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (argc - first != 1)
		return cli_usage_error("probe", "wants exactly one CLIP");
	if (run(argv[first], frames_csv, threads, quiet, json, &damaged, &err) != WL_OK)
		return cli_fail("probe", &err);
	if (damaged) {
		fflush(stdout);
		return cli_fail("probe", &err);
	}
	return WL_EXIT_OK;
}
