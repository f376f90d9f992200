/* cmd_batch.c: `wakeline batch DIR --cal CAL.json -o OUT`: every clip under
 * DIR through the pipeline (wl_process_clip) in parallel worker processes,
 * resumable, then summary.csv and report.html (src/batch/batch.h); also
 * `batch --status OUT` and `batch --slurm` (src/batch/slurm.h). */
#define _GNU_SOURCE
#include <errno.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "batch/batch.h"
#include "batch/slurm.h"
#include "cli/cli.h"
#include "cli/stageopts.h"
#include "core/afile.h"
#include "core/csvio.h"

const char cmd_batch_summary[] =
        "process every clip of a folder (resumable), then summary.csv and report.html";

static const char HEAD[] = "usage: wakeline batch DIR --cal CAL.json -o OUTDIR [options]\n"
                           "       wakeline batch --status OUTDIR\n"
                           "       wakeline batch DIR --cal CAL.json -o OUTDIR --slurm [slurm options]\n"
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
                           "smoother, commanded_period_s (docs/batch.md).  On a Slurm cluster see\n"
                           "docs/cluster.md.\n"
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

static int parse_lock(const char *s, void *dest, char *msg, size_t cap)
{
	wl_batch_lock_mode *m = dest;
	if (strcmp(s, "flock") == 0)
		*m = WL_BATCH_LOCK_FLOCK;
	else if (strcmp(s, "dir") == 0)
		*m = WL_BATCH_LOCK_DIR;
	else if (strcmp(s, "none") == 0)
		*m = WL_BATCH_LOCK_NONE;
	else
		return snprintf(msg, cap, "give flock, dir or none"), 1;
	return 0;
}

static int report(const wl_batch_opts *o, const wl_batch_result *res)
{
	printf("batch: %zu clips: %zu done, %zu already complete, %zu failed; %zu manifest rows name missing "
	       "clips; %zu without a manifest row\n",
	       res->clips, res->done, res->skipped, res->failed, res->missing, res->unlisted);
	printf("batch: %d worker%s at once, %d decoder thread%s each (%d CPU%s this process may use)\n",
	       res->jobs, res->jobs == 1 ? "" : "s", res->threads, res->threads == 1 ? "" : "s", res->cpus,
	       res->cpus == 1 ? "" : "s");
	if (o->shard_count > 1)
		printf("batch: shard %d/%d finished; run `wakeline merge %s` when every shard is done\n",
		       o->shard_index, o->shard_count, o->out_dir);
	else
		printf("batch: %zu runs; see %s/summary.csv and %s/report.html\n", res->runs, o->out_dir,
		       o->out_dir);
	return cli_finish("batch", res->failed || res->missing ? WL_EXIT_FAIL : WL_EXIT_OK);
}

/* `batch --status OUT`: where the sweep stands. */
static int show_status(const char *out)
{
	wl_batch_status_report st;
	wl_err err;
	size_t i;
	int k, shown = 0;
	wl_err_clear(&err);
	if (wl_batch_status(out, &st, &err) != WL_OK)
		return cli_fail("batch", &err);
	printf("%s: %zu clips in %d shard%s: %zu done, %zu failed, %zu running, %zu interrupted, %zu not "
	       "started; %zu manifest rows name missing clips\n",
	       out, st.n - st.count[WL_BATCH_MISSING], st.shard_count, st.shard_count == 1 ? "" : "s",
	       st.count[WL_BATCH_DONE], st.count[WL_BATCH_FAILED], st.count[WL_BATCH_RUNNING],
	       st.count[WL_BATCH_INTERRUPTED], st.count[WL_BATCH_NOT_STARTED], st.count[WL_BATCH_MISSING]);
	for (i = 0; i < st.n; i++) {
		const wl_batch_clip_status *e = &st.e[i];
		if (e->state == WL_BATCH_DONE)
			continue;
		if (e->shard >= 0 && st.shard_count > 1)
			printf("%-11s %s (shard %d/%d)%s%s\n", wl_batch_state_name(e->state), e->clip,
			       e->shard, st.shard_count, e->msg ? ": " : "", e->msg ? e->msg : "");
		else
			printf("%-11s %s%s%s\n", wl_batch_state_name(e->state), e->clip, e->msg ? ": " : "",
			       e->msg ? e->msg : "");
	}
	if (st.shard_count > 1) {
		printf("shards running now:");
		for (k = 0; k < st.shard_count; k++)
			if (st.shard_running[k]) {
				printf(" %d", k);
				shown = 1;
			}
		printf("%s\n", shown ? "" : " none");
	}
	k = st.count[WL_BATCH_DONE] == st.n;
	wl_batch_status_release(&st);
	return cli_finish("batch", k ? WL_EXIT_OK : WL_EXIT_FAIL);
}

/* ---- --slurm ---------------------------------------------------------------- */

typedef struct {
	int on, dry;
	wl_slurm_opts o;
	const char *args[160]; /* the shard tasks' batch arguments */
	size_t nargs;
	char *owned[16]; /* absolute paths made for args (freed by the caller) */
	size_t nowned;
} slurm_cli;

/* An absolute path of an existing file or folder, for the job scripts. */
static int abs_arg(const char *what, const char *p, char *out)
{
	if (realpath(p, out))
		return 1;
	fprintf(stderr, "wakeline batch: %s '%s': %s\n", what, p, strerror(errno));
	return 0;
}

static const cli_opt *stage_opt(const cli_stages *s, const char *name, size_t len)
{
	const cli_opt *const tables[] = {s->body, s->track, s->clean, s->measure};
	for (size_t t = 0; t < sizeof tables / sizeof tables[0]; t++)
		for (const cli_opt *o = tables[t]; o->kind != CLI_END; o++)
			if (o->kind != CLI_SECTION &&
			    ((strlen(o->name) == len && strncmp(o->name, name, len) == 0) ||
			     (o->alias && strlen(o->alias) == len && strncmp(o->alias, name, len) == 0)))
				return o;
	return NULL;
}

/* The options of track, clean and measure as given (argv[1..first-1], which
 * cli_parse left in order), for the shard tasks: the same spelling, with
 * --robots made an absolute path.  0, or 1 with the message printed. */
static int forward_stage_args(slurm_cli *sl, const cli_stages *s, int first, char **argv)
{
	for (int i = 1; i < first; i++) {
		const char *a = argv[i], *eq;
		const cli_opt *o;
		if (strncmp(a, "--", 2) != 0)
			continue;
		eq = strchr(a, '=');
		o = stage_opt(s, a + 2, eq ? (size_t)(eq - a - 2) : strlen(a + 2));
		if (!o)
			continue; /* the batch's own option */
		if (sl->nargs + 2 >= sizeof sl->args / sizeof sl->args[0] ||
		    sl->nowned >= sizeof sl->owned / sizeof sl->owned[0]) {
			fprintf(stderr, "wakeline batch: too many options for --slurm\n");
			return 1;
		}
		if (o->kind != CLI_FLAG && !eq && i + 1 < first) {
			const char *v = argv[++i];
			sl->args[sl->nargs++] = a;
			if (o->dest == &s->robots) {
				char *p = malloc(PATH_MAX);
				if (!p || !abs_arg("--robots", v, p)) {
					free(p);
					return 1;
				}
				sl->owned[sl->nowned++] = p;
				v = p;
			}
			sl->args[sl->nargs++] = v;
		} else if (o->dest == &s->robots) {
			fprintf(stderr,
			        "wakeline batch: with --slurm give --robots FILE (not --robots=FILE)\n");
			return 1;
		} else
			sl->args[sl->nargs++] = a;
	}
	return 0;
}

/* `batch --slurm`: plan the sweep, write the job scripts, submit them. */
static int submit_slurm(slurm_cli *sl, wl_batch_opts *o, const cli_stages *s, int first, char **argv)
{
	static char dir[PATH_MAX], cal[PATH_MAX], man[PATH_MAX], out[PATH_MAX], prog[PATH_MAX];
	char shard_script[PATH_MAX + 32], merge_script[PATH_MAX + 32], jobs[16], threads[16], body[64];
	char array_id[64], merge_id[64], dep[96];
	const char *margs[12];
	size_t nm = 0;
	wl_batch_result res;
	wl_err err;
	ssize_t n;

	wl_err_clear(&err);
	if (o->shard_count > 1)
		return cli_usage_error("batch", "--slurm makes the shards itself: leave out --shard");
	if (!abs_arg("the clip folder", o->clip_dir, dir) ||
	    (o->cal_path && !abs_arg("--cal", o->cal_path, cal)) ||
	    (o->manifest_path && !abs_arg("--manifest", o->manifest_path, man)))
		return cli_finish("batch", WL_EXIT_FAIL);
	if (wl_mkdirs(o->out_dir, &err) != WL_OK)
		return cli_fail("batch", &err);
	if (!abs_arg("-o", o->out_dir, out))
		return cli_finish("batch", WL_EXIT_FAIL);
	n = readlink("/proc/self/exe", prog, sizeof prog - 1);
	if (n <= 0) {
		fprintf(stderr, "wakeline batch: cannot find this program's path: %s\n", strerror(errno));
		return cli_finish("batch", WL_EXIT_FAIL);
	}
	prog[n] = '\0';
	/* count the clips and record the sweep (batch.json) before anything runs */
	o->shard_count = 1;
	if (wl_batch_plan(o, &res, &err) != WL_OK)
		return cli_fail("batch", &err);
	if (res.clips == 0) {
		fprintf(stderr, "wakeline batch: no clips under '%s': nothing to submit\n", o->clip_dir);
		return cli_finish("batch", WL_EXIT_FAIL);
	}
	if (!sl->o.shards)
		sl->o.shards = res.clips < 32 ? (int)res.clips : 32;
	if ((size_t)sl->o.shards > res.clips)
		sl->o.shards = (int)res.clips;
	o->shard_count = sl->o.shards;
	if (wl_batch_plan(o, &res, &err) != WL_OK)
		return cli_fail("batch", &err);

	sl->args[sl->nargs++] = dir;
	if (o->cal_path)
		sl->args[sl->nargs++] = "--cal", sl->args[sl->nargs++] = cal;
	if (o->manifest_path)
		sl->args[sl->nargs++] = "--manifest", sl->args[sl->nargs++] = man;
	sl->args[sl->nargs++] = "-o", sl->args[sl->nargs++] = out;
	if (forward_stage_args(sl, s, first, argv))
		return cli_finish("batch", WL_EXIT_FAIL);
	if (sl->nargs + 16 >= sizeof sl->args / sizeof sl->args[0])
		return cli_usage_error("batch", "too many options for --slurm");
	if (o->sweep.x_col)
		sl->args[sl->nargs++] = "--x", sl->args[sl->nargs++] = o->sweep.x_col;
	if (o->sweep.group_col)
		sl->args[sl->nargs++] = "--group", sl->args[sl->nargs++] = o->sweep.group_col;
	if (o->jobs > 0) {
		snprintf(jobs, sizeof jobs, "%d", o->jobs);
		sl->args[sl->nargs++] = "-j", sl->args[sl->nargs++] = jobs;
	}
	if (o->threads > 0) {
		snprintf(threads, sizeof threads, "%d", o->threads);
		sl->args[sl->nargs++] = "--threads", sl->args[sl->nargs++] = threads;
	}
	if (o->force)
		sl->args[sl->nargs++] = "--force";
	if (o->lock == WL_BATCH_LOCK_DIR)
		sl->args[sl->nargs++] = "--lock", sl->args[sl->nargs++] = "dir";
	else if (o->lock == WL_BATCH_LOCK_NONE)
		sl->args[sl->nargs++] = "--lock", sl->args[sl->nargs++] = "none";
	sl->args[sl->nargs++] = "-q";
	margs[nm++] = out;
	if (o->sweep.x_col)
		margs[nm++] = "--x", margs[nm++] = o->sweep.x_col;
	if (o->sweep.group_col)
		margs[nm++] = "--group", margs[nm++] = o->sweep.group_col;
	if (o->sweep.body_diameter_m > 0) {
		wl_fmt_g(body, o->sweep.body_diameter_m, 17);
		margs[nm++] = "--body-diameter-m", margs[nm++] = body;
	}
	sl->o.program = prog;
	sl->o.out_dir = out;
	sl->o.batch_args = sl->args;
	sl->o.nbatch_args = sl->nargs;
	sl->o.merge_args = margs;
	sl->o.nmerge_args = nm;
	if (wl_slurm_write(&sl->o, shard_script, merge_script, PATH_MAX + 32, &err) != WL_OK)
		return cli_fail("batch", &err);
	printf("batch: %zu clips in %d shards (clip i goes to shard i %% %d); %zu manifest rows name missing "
	       "clips\n",
	       res.clips, sl->o.shards, sl->o.shards, res.missing);
	printf("batch: wrote %s and %s\n", shard_script, merge_script);
	if (sl->dry) {
		printf("batch: not submitted (--dry-run).  To submit:\n"
		       "  sbatch --parsable %s                    # prints the array's job id A\n"
		       "  sbatch --dependency=afterany:A %s\n",
		       shard_script, merge_script);
		return cli_finish("batch", WL_EXIT_OK);
	}
	if (wl_slurm_submit(shard_script, NULL, array_id, sizeof array_id, &err) != WL_OK)
		return cli_fail("batch", &err);
	snprintf(dep, sizeof dep, "afterany:%s", array_id);
	if (wl_slurm_submit(merge_script, dep, merge_id, sizeof merge_id, &err) != WL_OK) {
		fprintf(stderr, "wakeline batch: the shards were submitted as job %s, the merge was not\n",
		        array_id);
		return cli_fail("batch", &err);
	}
	printf("batch: submitted job array %s (%d tasks) and merge job %s (after every task has ended)\n",
	       array_id, sl->o.shards, merge_id);
	printf("next:\n"
	       "  squeue -j %s,%s                      # the jobs\n"
	       "  wakeline batch --status %s          # clips done, failed, running\n"
	       "  when job %s has ended: %s/report.html and summary.csv (log: %s/slurm/logs/merge-%s.out)\n"
	       "  to run task K again: sbatch --array=K %s, then sbatch --dependency=afterany:<its id> %s\n",
	       array_id, merge_id, out, merge_id, out, out, merge_id, shard_script, merge_script);
	{
		/* the ids, for scripts */
		char path[PATH_MAX + 32], text[256];
		snprintf(path, sizeof path, "%s/slurm/jobs.txt", out);
		snprintf(text, sizeof text, "array %s\nmerge %s\n", array_id, merge_id);
		wl_write_file_atomic(path, text, strlen(text), NULL);
	}
	return cli_finish("batch", WL_EXIT_OK);
}

static int run_batch(wl_batch_opts *o, cli_stages *s, int quiet)
{
	wl_batch_result res;
	ui u;
	wl_err err;
	int rc;
	memset(&u, 0, sizeof u);
	if (isfinite(s->body_m))
		o->sweep.body_diameter_m = s->body_m;
	o->threads = s->p.decode_threads;
	o->proc = &s->p;
	o->on_event = on_event;
	o->ev_ctx = &u;
	cli_diag_init(&u.cd, "batch", quiet);
	u.d = (wl_diag){on_warn, on_progress, &u};
	o->diag = &u.d;
	wl_err_clear(&err);
	rc = wl_batch_run(o, &res, &err);
	cli_diag_done(&u.cd);
	wl_report_release_caches();
	if (rc != WL_OK)
		return cli_fail("batch", &err);
	return report(o, &res);
}

int cmd_batch(int argc, char **argv)
{
	static cli_stages s; /* large; the tables point into it */
	static slurm_cli sl;
	wl_batch_opts o;
	int quiet = 0, status = 0, no_lock = 0, rc, first;
	const cli_opt own[] = {
	        CLI_OPT_STR("cal", 0, "CAL.json", "the calibration (a manifest's `cal` cell overrides it)",
	                    &o.cal_path),
	        CLI_OPT_STR("manifest", 0, "FILE.csv",
	                    "one row per clip: a `clip` column (path relative to DIR),\nparameter columns, "
	                    "and option columns (above)",
	                    &o.manifest_path),
	        CLI_OPT_STR("out", 'o', "OUTDIR", "where everything goes (created)", &o.out_dir),
	        CLI_OPT_INT("jobs", 'j', "N",
	                    "clips processed at once (default: the CPUs this process\nmay use: its "
	                    "affinity mask, or SLURM_CPUS_PER_TASK)",
	                    &o.jobs, 1, 256),
	        CLI_OPT_FLAG("force", 0, "redo clips that are complete", &o.force),
	        CLI_OPT_FN("lock", "MODE",
	                   "how a second run of the same shard is kept out of OUTDIR:\nflock (default), "
	                   "dir (a lock directory made with mkdir,\nfor file systems without locks; a "
	                   "killed run leaves it:\nremove it by hand when the run was on another host),\n"
	                   "none (no protection: two runs of one shard at once\nwould spoil each other's "
	                   "clips)",
	                   &o.lock, parse_lock),
	        CLI_OPT_FLAG("no-lock", 0, "the same as --lock none", &no_lock),
	        CLI_OPT_STR("x", 0, "COLUMN", "manifest column on the sweep plots' x axis", &o.sweep.x_col),
	        CLI_OPT_STR("group", 0, "COLUMN", "manifest column that groups the sweep points",
	                    &o.sweep.group_col),
	        CLI_OPT_FN("shard", "K/N",
	                   "process only clips K, K+N, K+2N... (0 <= K < N) of the\nsorted list, for job "
	                   "arrays; run `wakeline merge OUTDIR`\nwhen all shards are done",
	                   &o, parse_shard),
	        CLI_OPT_FLAG("quiet", 'q', "no progress line", &quiet),
	        CLI_OPT_FLAG("status", 0,
	                     "where the sweep in OUTDIR stands (also while shards run):\nclips done, "
	                     "failed (with their messages), running,\ninterrupted and not started; exit 0 "
	                     "when every clip is\ndone, else 1",
	                     &status),
	        CLI_OPT_SECTION("On a Slurm cluster (docs/cluster.md):"),
	        CLI_OPT_FLAG("slurm", 0,
	                     "plan the sweep (OUTDIR/batch.json), write a job array of\nshard tasks and a "
	                     "merge job (OUTDIR/slurm/*.sbatch) and\nsubmit them with sbatch, the merge "
	                     "after every task has\nended (afterany); prints the job ids and what to run "
	                     "next",
	                     &sl.on),
	        CLI_OPT_INT("shards", 0, "N", "tasks in the array (default: one per clip, at most 32)",
	                    &sl.o.shards, 1, 100000),
	        CLI_OPT_STR("partition", 0, "P", "#SBATCH --partition of the tasks and the merge",
	                    &sl.o.partition),
	        CLI_OPT_STR("time", 0, "T", "#SBATCH --time of the tasks (and of the merge)", &sl.o.time),
	        CLI_OPT_INT("cpus-per-task", 0, "C", "#SBATCH --cpus-per-task of the tasks",
	                    &sl.o.cpus_per_task, 1, 4096),
	        CLI_OPT_STR("mem", 0, "M", "#SBATCH --mem of the tasks", &sl.o.mem),
	        CLI_OPT_STR("account", 0, "A", "#SBATCH --account", &sl.o.account),
	        CLI_OPT_STR("merge-time", 0, "T", "the merge job's --time", &sl.o.merge_time),
	        CLI_OPT_STR("sbatch-lines", 0, "FILE", "extra '#SBATCH ...' lines for both scripts",
	                    &sl.o.extra_path),
	        CLI_OPT_FLAG("dry-run", 0, "write the scripts, submit nothing", &sl.dry),
	        CLI_OPT_END};
	const cli_opt *tables[] = {own, s.body, s.track, s.clean, s.measure, NULL};
	memset(&o, 0, sizeof o);
	memset(&sl, 0, sizeof sl);
	cli_stages_init(&s);
	for (cli_opt *t = s.track; t->kind != CLI_END; t++)
		if (t->kind != CLI_SECTION && strcmp(t->name, "threads") == 0) {
			t->help = "decoder threads per clip (default: the CPUs this\nprocess may use / -j)";
			t->lo = 1;
		}
	if ((rc = cli_parse("batch", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (no_lock)
		o.lock = WL_BATCH_LOCK_NONE;
	if (status) {
		if (argc - first > 1 || (argc - first == 1 && o.out_dir) || (argc == first && !o.out_dir))
			return cli_usage_error("batch", "--status wants one OUTDIR (batch --status OUTDIR)");
		return show_status(o.out_dir ? o.out_dir : argv[first]);
	}
	if (argc - first != 1)
		return cli_usage_error("batch", "wants one DIR (the folder of clips)");
	if (!o.out_dir)
		return cli_usage_error("batch", "-o OUTDIR is required");
	if (!o.cal_path && !o.manifest_path)
		return cli_usage_error("batch",
		                       "--cal CAL.json is required (or a manifest with a `cal` column)");
	if ((rc = cli_stages_finish("batch", &s)) != CLI_CONTINUE)
		return rc;
	o.clip_dir = argv[first];
	if (sl.on) {
		if (isfinite(s.body_m))
			o.sweep.body_diameter_m = s.body_m;
		o.threads = s.p.decode_threads;
		o.proc = &s.p;
		rc = submit_slurm(&sl, &o, &s, first, argv);
		for (size_t i = 0; i < sl.nowned; i++)
			free(sl.owned[i]);
		return rc;
	}
	if (sl.o.shards || sl.dry || sl.o.partition || sl.o.time || sl.o.merge_time || sl.o.cpus_per_task ||
	    sl.o.mem || sl.o.account || sl.o.extra_path)
		return cli_usage_error("batch", "--shards, --partition, --time, --cpus-per-task, --mem, "
		                                "--account, --sbatch-lines and --dry-run go with --slurm");
	return run_batch(&o, &s, quiet);
}
