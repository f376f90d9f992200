/* cmd_batch.c: `wakeline batch DIR --cal CAL.json -o OUT`: every clip under
 * DIR through the pipeline (wl_process_clip) in parallel worker processes,
 * resumable, then summary.csv and report.html (src/batch/batch.h). */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "batch/batch.h"
#include "cli/cli.h"
#include "cli/stageopts.h"

const char cmd_batch_summary[] =
        "process every clip of a folder (resumable), then summary.csv and report.html";

static const char HEAD[] = "usage: wakeline batch DIR --cal CAL.json -o OUTDIR [options]\n"
                           "\n"
                           "Finds the video clips under DIR (mp4 mov m4v avi mkv webm, any case, in\n"
                           "sub-folders too; names starting with '.' are left out), runs each through\n"
                           "track, clean and measure with its plots in OUTDIR/clips/<name>/ (as\n"
                           "`wakeline process` would), then writes OUTDIR/summary.csv, the sweep plots\n"
                           "and OUTDIR/report.html.  Run it again after an interruption: clips that are\n"
                           "complete for the same input, calibration and settings are skipped.\n"
                           "\n"
                           "A manifest row may set these options for its clip (an empty cell keeps the\n"
                           "batch's): cal, robots, mode, family, plane_height_m, body_diameter_m, trim,\n"
                           "smoother, commanded_period_s (docs/batch.md).\n"
                           "\n";
static const char TAIL[] = "\nExit status: 0 every clip done, 1 a clip failed, a manifest row names a\n"
                           "missing clip, or an error, 2 usage error.  Failed clips are listed in\n"
                           "summary.csv and report.html with their messages; the others are not affected.\n";

/* The progress line: clip counts from the events, the share done from the
 * batch's progress. */
typedef struct {
	cli_diag cd;
	wl_diag d;
	wl_batch_event last;
} ui;

static void fmt_time(char *buf, size_t cap, double s)
{
	if (!isfinite(s))
		snprintf(buf, cap, "--");
	else if (s >= 3600)
		snprintf(buf, cap, "%dh%02dm", (int)(s / 3600), (int)fmod(s / 60, 60));
	else
		snprintf(buf, cap, "%dm%02ds", (int)(s / 60), (int)fmod(s, 60));
}

static void on_progress(void *ctx, const char *stage, double done, double total, double t_s)
{
	ui *u = ctx;
	char eta[32];
	double el = cli_now_s() - u->cd.prog.t_start;
	(void)stage;
	(void)t_s;
	fmt_time(eta, sizeof eta, done > 0 && el > 0.5 ? el * (total - done) / done : NAN);
	cli_progress_update(&u->cd.prog, "[%zu/%zu done, %zu failed, %zu running] %s left", u->last.finished,
	                    u->last.total, u->last.failed, u->last.running, eta);
}

/* Warnings as every command prints them (cli.h, cli_diag). */
static void on_warn(void *ctx, const char *stage, const char *msg)
{
	ui *u = ctx;
	u->cd.d.warn(&u->cd, stage, msg);
}

static void on_event(const wl_batch_event *ev, void *ctx)
{
	ui *u = ctx;
	u->last = *ev;
	if (ev->kind == WL_BATCH_EV_FAIL) {
		cli_progress_done(&u->cd.prog);
		u->cd.prog.t_last = 0;
		fprintf(stderr, "wakeline batch: clip failed: %s\n", ev->msg ? ev->msg : "");
	}
}

static int parse_shard(const char *s, void *dest, char *msg, size_t cap)
{
	wl_batch_opts *o = dest;
	char tail;
	if (sscanf(s, "%d/%d%c", &o->shard_index, &o->shard_count, &tail) == 2 && o->shard_count >= 1 &&
	    o->shard_index >= 0 && o->shard_index < o->shard_count)
		return 0;
	snprintf(msg, cap, "give K/N with 0 <= K < N");
	return 1;
}

static int report(const wl_batch_opts *o, const wl_batch_result *res)
{
	printf("batch: %zu clips: %zu done, %zu already complete, %zu failed; %zu manifest rows name missing "
	       "clips; %zu without a manifest row\n",
	       res->clips, res->done, res->skipped, res->failed, res->missing, res->unlisted);
	if (o->shard_count > 1)
		printf("batch: shard %d/%d finished; run `wakeline merge %s` when every shard is done\n",
		       o->shard_index, o->shard_count, o->out_dir);
	else
		printf("batch: %zu runs; see %s/summary.csv and %s/report.html\n", res->runs, o->out_dir,
		       o->out_dir);
	return cli_finish("batch", res->failed || res->missing ? WL_EXIT_FAIL : WL_EXIT_OK);
}

int cmd_batch(int argc, char **argv)
{
	cli_stages s;
	wl_batch_opts o;
	wl_batch_result res;
	ui u;
	wl_err err;
	int quiet = 0, rc, first;
	const cli_opt own[] = {
	        CLI_OPT_STR("cal", 0, "CAL.json", "the calibration (a manifest's `cal` cell overrides it)",
	                    &o.cal_path),
	        CLI_OPT_STR("manifest", 0, "FILE.csv",
	                    "one row per clip: a `clip` column (path relative to DIR),\nparameter columns, "
	                    "and option "
	                    "columns (above)",
	                    &o.manifest_path),
	        CLI_OPT_STR("out", 'o', "OUTDIR", "where everything goes (created)", &o.out_dir),
	        CLI_OPT_INT("jobs", 'j', "N", "clips processed at once (default: the number of cores)",
	                    &o.jobs, 1, 256),
	        CLI_OPT_FLAG("force", 0, "redo clips that are complete", &o.force),
	        CLI_OPT_STR("x", 0, "COLUMN", "manifest column on the sweep plots' x axis", &o.sweep.x_col),
	        CLI_OPT_STR("group", 0, "COLUMN", "manifest column that groups the sweep points",
	                    &o.sweep.group_col),
	        CLI_OPT_FN("shard", "K/N",
	                   "process only clips K, K+N, K+2N... (0 <= K < N) of the\nsorted list, for job "
	                   "arrays; run "
	                   "`wakeline merge OUTDIR`\nwhen all shards are done",
	                   &o, parse_shard),
	        CLI_OPT_FLAG("quiet", 'q', "no progress line", &quiet),
	        CLI_OPT_END};
	const cli_opt *tables[] = {own, s.body, s.track, s.clean, s.measure, NULL};
	memset(&o, 0, sizeof o);
	memset(&u, 0, sizeof u);
	cli_stages_init(&s);
	if ((rc = cli_parse("batch", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (argc - first != 1)
		return cli_usage_error("batch", "wants one DIR (the folder of clips)");
	if (!o.out_dir)
		return cli_usage_error("batch", "-o OUTDIR is required");
	if (!o.cal_path && !o.manifest_path)
		return cli_usage_error("batch",
		                       "--cal CAL.json is required (or a manifest with a `cal` column)");
	if ((rc = cli_stages_finish("batch", &s)) != CLI_CONTINUE)
		return rc;
	if (s.p.decode_threads == 0) {
		/* the cores shared among the workers */
		long cores = sysconf(_SC_NPROCESSORS_ONLN);
		int jobs = o.jobs > 0 ? o.jobs : (int)(cores > 0 ? cores : 1);
		s.p.decode_threads = cores > jobs ? (int)(cores / jobs) : 1;
	}
	if (isfinite(s.body_m))
		o.sweep.body_diameter_m = s.body_m;
	o.clip_dir = argv[first];
	o.proc = &s.p;
	o.on_event = on_event;
	o.ev_ctx = &u;
	cli_diag_init(&u.cd, "batch", quiet);
	u.d = (wl_diag){on_warn, on_progress, &u};
	o.diag = &u.d;
	wl_err_clear(&err);
	rc = wl_batch_run(&o, &res, &err);
	cli_diag_done(&u.cd);
	wl_report_release_caches();
	if (rc != WL_OK)
		return cli_fail("batch", &err);
	return report(&o, &res);
}
