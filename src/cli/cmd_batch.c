/* cmd_batch.c: `wakeline batch DIR --cal CAL.json -o OUT`: every clip under
 * DIR through track, clean, measure and the plots, in parallel worker
 * processes, resumable, then summary.csv and report.html. */
#define _GNU_SOURCE
#include <errno.h>
#include <getopt.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "batch/batch.h"
#include "batch/slurm.h"
#include "cli/cli.h"
#include "core/afile.h"
#include "core/csvio.h"
#include "wl_version.h"

const char cmd_batch_summary[] =
        "process every clip of a folder (resumable), then summary.csv and report.html";

static const char USAGE[] =
        "usage: wakeline batch DIR --cal CAL.json -o OUTDIR [options]\n"
        "       wakeline batch --status OUTDIR\n"
        "\n"
        "Finds the video clips under DIR (mp4 mov m4v avi mkv webm, any case, in\n"
        "sub-folders too; names starting with '.' are left out), runs each through\n"
        "track, clean and measure with its plots in OUTDIR/clips/<name>/, then writes\n"
        "OUTDIR/summary.csv, the sweep plots and OUTDIR/report.html.  Run it again\n"
        "after an interruption: clips that are complete for the same input, the same\n"
        "calibration and the same settings are skipped, the rest are done.\n"
        "\n"
        "  --cal CAL.json        the calibration (a manifest's `cal` cell overrides it)\n"
        "  --manifest FILE.csv   one row per clip: a `clip` column (path relative to DIR)\n"
        "                        and any parameter columns; optional `cal` and\n"
        "                        `plane_height_m` override per clip\n"
        "  --robots ROBOTS.csv   the robots (ids, plane heights, colours): see `wakeline track --help`\n"
        "  -o, --out OUTDIR      where everything goes (created)\n"
        "  -j, --jobs N          clips processed at once (default: the CPUs this process\n"
        "                        may use: its affinity mask, or SLURM_CPUS_PER_TASK)\n"
        "  --threads N           decoder threads per clip (default: those CPUs / -j)\n"
        "  --force               redo clips that are complete\n"
        "  --lock MODE           how a second run of the same shard is kept out of OUTDIR:\n"
        "                        flock (default), dir (a lock directory made with mkdir,\n"
        "                        for file systems without locks; a killed run leaves it:\n"
        "                        remove it by hand when the run was on another host),\n"
        "                        none (no protection: two runs of one shard at once\n"
        "                        would spoil each other's clips)\n"
        "  --no-lock             the same as --lock none\n"
        "  --x COLUMN            manifest column on the sweep plots' x axis\n"
        "  --group COLUMN        manifest column that groups the sweep points\n"
        "  --body-m D            body diameter (m): the wall cut, radius_body_diameters\n"
        "                        and the sweep plots' shaded band\n"
        "  --shard K/N           process only clips K, K+N, K+2N... (0 <= K < N) of the\n"
        "                        sorted list, for job arrays; run `wakeline merge OUTDIR`\n"
        "                        when all shards are done\n"
        "  -q, --quiet           no progress line\n"
        "  --status OUTDIR       where the sweep in OUTDIR stands (also while shards run):\n"
        "                        clips done, failed (with their messages), running,\n"
        "                        interrupted and not started; exit 0 when every clip is\n"
        "                        done, else 1\n"
        "\n"
        "On a Slurm cluster (see docs/cluster.md):\n"
        "  --slurm               plan the sweep (OUTDIR/batch.json), write a job array of\n"
        "                        shard tasks and a merge job (OUTDIR/slurm/*.sbatch) and\n"
        "                        submit them with sbatch, the merge after every task has\n"
        "                        ended (afterany); prints the job ids and what to run next\n"
        "  --shards N            tasks in the array (default: one per clip, at most 32)\n"
        "  --partition P, --time T, --cpus-per-task C, --mem M, --account A\n"
        "                        the #SBATCH options of the tasks (--time also of the merge)\n"
        "  --merge-time T        the merge job's --time\n"
        "  --sbatch-lines FILE   extra '#SBATCH ...' lines for both scripts\n"
        "  --dry-run             write the scripts, submit nothing\n"
        "  -h, --help            this text\n"
        "\n"
        "Exit status: 0 every clip done, 1 a clip failed, a manifest row names a\n"
        "missing clip, or an error, 2 usage error.  Failed clips are listed in\n"
        "summary.csv and report.html with their messages; the others are not affected.\n";

typedef struct {
	cli_progress prog;
	int quiet;
} ui;

/* What every clip folder holds when its clip is done. */
static const char *const OUTPUTS[] = {"raw.csv",     "clean.csv",  "clean.json",  "summary.json",
                                      "path_m.svg",  "path_m.png", "heading.svg", "heading.png",
                                      "process.log", NULL};

typedef struct {
	const char *robots, *body;
} proc_opts;

/* The last "error:" line of a log (else its last line), for the clip's
 * message. */
static void last_error(const char *log, char *out, size_t cap)
{
	char *text = NULL, *p, *best = NULL, *last = NULL;
	size_t len = 0;
	out[0] = '\0';
	if (wl_read_file(log, 1 << 24, &text, &len, NULL) != WL_OK)
		return;
	for (p = text; (p = strstr(p, "error: ")); p++)
		best = p + 7;
	for (p = text; *p; p++)
		if ((p == text || p[-1] == '\n') && *p != '\n')
			last = p;
	if (!best)
		best = last;
	if (best)
		snprintf(out, cap, "%.*s", (int)strcspn(best, "\n"), best);
	free(text);
}

/* One clip, in a batch worker: `wakeline process` with the clip's
 * calibration and plane height, its output going to process.log. */
static wl_status batch_clip(const wl_batch_job *job, void *ctx, wl_err *err)
{
	const proc_opts *po = ctx;
	char log[4200], plane[WL_NUMBUF], msg[400], threads[16];
	const char *args[24];
	char *argv[24];
	wl_afile *af = NULL;
	int n = 0, rc, i;
	wl_status s;

	if (!job->cal_path)
		return wl_err_set(err, WL_EINVAL, "%s: no calibration: give --cal or a 'cal' cell",
		                  job->clip_rel);
	snprintf(log, sizeof log, "%s/process.log", job->out_dir);
	if ((s = wl_afile_open(log, &af, err)))
		return s;
	fflush(stdout);
	fflush(stderr);
	dup2(fileno(wl_afile_fp(af)), STDOUT_FILENO);
	dup2(fileno(wl_afile_fp(af)), STDERR_FILENO);
	args[n++] = "process", args[n++] = job->clip_path, args[n++] = "--cal", args[n++] = job->cal_path;
	snprintf(threads, sizeof threads, "%d", job->threads > 0 ? job->threads : 1);
	args[n++] = "-o", args[n++] = job->out_dir, args[n++] = "-q", args[n++] = "--threads",
	args[n++] = threads;
	if (isfinite(job->plane_height_m))
		args[n++] = "--plane-height-m", args[n++] = wl_fmt_g(plane, job->plane_height_m, 17);
	if (po->robots)
		args[n++] = "--robots", args[n++] = po->robots;
	if (po->body)
		args[n++] = "--body-diameter-m", args[n++] = po->body;
	for (i = 0; i < n; i++)
		argv[i] = (char *)args[i]; /* cmd_process's getopt does not write into its arguments */
	argv[n] = NULL;
	printf("wakeline %s process %s\n", WL_VERSION, job->clip_path);
	rc = cmd_process(n, argv);
	fflush(stdout);
	fflush(stderr);
	if ((s = wl_afile_commit(af, err)))
		return s;
	if (rc != WL_EXIT_OK) {
		last_error(log, msg, sizeof msg);
		return wl_err_set(err, WL_EIO, "%s", msg[0] ? msg : "the clip failed: see its process.log");
	}
	{
		/* frames of the clip, for the frames-per-second figure */
		char raw[4200];
		FILE *fp;
		int ch, last = '\n';
		snprintf(raw, sizeof raw, "%s/raw.csv", job->out_dir);
		fp = fopen(raw, "r");
		if (fp) {
			long lines = 0;
			while ((ch = getc(fp)) != EOF) {
				lines += ch == '\n';
				last = ch;
			}
			lines += last != '\n';
			fclose(fp);
			if (job->progress && lines > 1)
				job->progress(job->progress_ctx, lines - 1, lines - 1);
		}
	}
	return WL_OK;
}

static void fmt_time(char *buf, size_t cap, double s)
{
	if (!isfinite(s))
		snprintf(buf, cap, "--");
	else if (s >= 3600)
		snprintf(buf, cap, "%dh%02dm", (int)(s / 3600), (int)fmod(s / 60, 60));
	else
		snprintf(buf, cap, "%dm%02ds", (int)(s / 60), (int)fmod(s, 60));
}

static void on_event(const wl_batch_event *ev, void *ctx)
{
	ui *u = ctx;
	char eta[32];
	if (ev->kind == WL_BATCH_EV_FAIL || ev->kind == WL_BATCH_EV_WARN) {
		cli_progress_done(&u->prog);
		u->prog.t_last = 0;
		if (ev->kind == WL_BATCH_EV_FAIL)
			fprintf(stderr, "wakeline batch: clip failed: %s\n", ev->msg ? ev->msg : "");
		else
			cli_warn("batch", "%s", ev->msg ? ev->msg : "");
		return;
	}
	fmt_time(eta, sizeof eta, ev->eta_s);
	cli_progress_update(&u->prog, "[%zu/%zu done, %zu failed, %zu running] %s  %.0f fps  %s left",
	                    ev->finished, ev->total, ev->failed, ev->running, ev->clip ? ev->clip : "",
	                    ev->fps, eta);
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

typedef struct {
	int on, dry;
	wl_slurm_opts o;
} slurm_cli;

/* An absolute path of an existing file or folder, for the job scripts. */
static int abs_arg(const char *what, const char *p, char *out)
{
	if (realpath(p, out))
		return 1;
	fprintf(stderr, "wakeline batch: %s '%s': %s\n", what, p, strerror(errno));
	return 0;
}

/* `batch --slurm`: plan the sweep, write the job scripts, submit them. */
static int submit_slurm(slurm_cli *sl, wl_batch_opts *o, const proc_opts *po)
{
	static char dir[PATH_MAX], cal[PATH_MAX], man[PATH_MAX], rob[PATH_MAX], out[PATH_MAX], prog[PATH_MAX];
	char shard_script[PATH_MAX + 32], merge_script[PATH_MAX + 32], jobs[16], threads[16];
	char array_id[64], merge_id[64], dep[96];
	const char *bargs[40], *margs[12];
	size_t nb = 0, nm = 0;
	wl_batch_result res;
	wl_err err;
	ssize_t n;

	wl_err_clear(&err);
	if (o->shard_count > 1)
		return cli_usage_error("batch", "--slurm makes the shards itself: leave out --shard");
	if (!abs_arg("the clip folder", o->clip_dir, dir) ||
	    (o->cal_path && !abs_arg("--cal", o->cal_path, cal)) ||
	    (o->manifest_path && !abs_arg("--manifest", o->manifest_path, man)) ||
	    (po->robots && !abs_arg("--robots", po->robots, rob)))
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

	bargs[nb++] = dir;
	if (o->cal_path)
		bargs[nb++] = "--cal", bargs[nb++] = cal;
	if (o->manifest_path)
		bargs[nb++] = "--manifest", bargs[nb++] = man;
	bargs[nb++] = "-o", bargs[nb++] = out;
	if (po->robots)
		bargs[nb++] = "--robots", bargs[nb++] = rob;
	if (po->body)
		bargs[nb++] = "--body-m", bargs[nb++] = po->body;
	if (o->sweep.x_col)
		bargs[nb++] = "--x", bargs[nb++] = o->sweep.x_col;
	if (o->sweep.group_col)
		bargs[nb++] = "--group", bargs[nb++] = o->sweep.group_col;
	if (o->jobs > 0) {
		snprintf(jobs, sizeof jobs, "%d", o->jobs);
		bargs[nb++] = "-j", bargs[nb++] = jobs;
	}
	if (o->threads > 0) {
		snprintf(threads, sizeof threads, "%d", o->threads);
		bargs[nb++] = "--threads", bargs[nb++] = threads;
	}
	if (o->force)
		bargs[nb++] = "--force";
	if (o->lock == WL_BATCH_LOCK_DIR)
		bargs[nb++] = "--lock", bargs[nb++] = "dir";
	else if (o->lock == WL_BATCH_LOCK_NONE)
		bargs[nb++] = "--lock", bargs[nb++] = "none";
	bargs[nb++] = "-q";
	margs[nm++] = out;
	if (o->sweep.x_col)
		margs[nm++] = "--x", margs[nm++] = o->sweep.x_col;
	if (o->sweep.group_col)
		margs[nm++] = "--group", margs[nm++] = o->sweep.group_col;
	if (po->body)
		margs[nm++] = "--body-m", margs[nm++] = po->body;
	sl->o.program = prog;
	sl->o.out_dir = out;
	sl->o.batch_args = bargs;
	sl->o.nbatch_args = nb;
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

enum { O_SLURM = 1000, O_SHARDS, O_PARTITION, O_TIME, O_CPUS, O_MEM, O_ACCOUNT, O_LINES, O_MTIME, O_DRY };

static int parse_shard(const char *s, int *k, int *n)
{
	char tail;
	return sscanf(s, "%d/%d%c", k, n, &tail) == 2 && *n >= 1 && *k >= 0 && *k < *n;
}

int cmd_batch(int argc, char **argv)
{
	/* clang-format off */
	static const struct option opts[] = {
	        {"cal", required_argument, NULL, 'c'},
	        {"manifest", required_argument, NULL, 'm'},
	        {"robots", required_argument, NULL, 'r'},
	        {"out", required_argument, NULL, 'o'},
	        {"jobs", required_argument, NULL, 'j'},
	        {"threads", required_argument, NULL, 'T'},
	        {"force", no_argument, NULL, 'f'},
	        {"lock", required_argument, NULL, 'L'},
	        {"no-lock", no_argument, NULL, 'N'},
	        {"x", required_argument, NULL, 'x'},
	        {"group", required_argument, NULL, 'g'},
	        {"body-m", required_argument, NULL, 'b'},
	        {"shard", required_argument, NULL, 's'},
	        {"quiet", no_argument, NULL, 'q'},
	        {"status", no_argument, NULL, 'S'},
	        {"slurm", no_argument, NULL, O_SLURM},
	        {"shards", required_argument, NULL, O_SHARDS},
	        {"partition", required_argument, NULL, O_PARTITION},
	        {"time", required_argument, NULL, O_TIME},
	        {"cpus-per-task", required_argument, NULL, O_CPUS},
	        {"mem", required_argument, NULL, O_MEM},
	        {"account", required_argument, NULL, O_ACCOUNT},
	        {"sbatch-lines", required_argument, NULL, O_LINES},
	        {"merge-time", required_argument, NULL, O_MTIME},
	        {"dry-run", no_argument, NULL, O_DRY},
	        {"help", no_argument, NULL, 'h'},
	        {NULL, 0, NULL, 0},
	};
	/* clang-format on */
	wl_batch_opts o;
	proc_opts po;
	wl_batch_result res;
	char settings[2048];
	ui u;
	wl_err err;
	int c, status = 0;
	slurm_cli sl;

	memset(&o, 0, sizeof o);
	memset(&u, 0, sizeof u);
	memset(&po, 0, sizeof po);
	memset(&sl, 0, sizeof sl);
	optind = 1;
	while ((c = getopt_long(argc, argv, "o:j:qh", opts, NULL)) != -1) {
		switch (c) {
		case 'c':
			o.cal_path = optarg;
			break;
		case 'm':
			o.manifest_path = optarg;
			break;
		case 'r':
			po.robots = optarg;
			break;
		case 'o':
			o.out_dir = optarg;
			break;
		case 'j':
			if (!cli_parse_int(optarg, &o.jobs) || o.jobs < 1 || o.jobs > 256)
				return cli_usage_error("batch",
				                       "-j wants a number of clips from 1 to 256, not '%s'",
				                       optarg);
			break;
		case 'T':
			if (!cli_parse_int(optarg, &o.threads) || o.threads < 1 || o.threads > 64)
				return cli_usage_error(
				        "batch", "--threads wants a number of threads from 1 to 64, not '%s'",
				        optarg);
			break;
		case 'f':
			o.force = 1;
			break;
		case 'L':
			if (strcmp(optarg, "flock") == 0)
				o.lock = WL_BATCH_LOCK_FLOCK;
			else if (strcmp(optarg, "dir") == 0)
				o.lock = WL_BATCH_LOCK_DIR;
			else if (strcmp(optarg, "none") == 0)
				o.lock = WL_BATCH_LOCK_NONE;
			else
				return cli_usage_error("batch", "--lock wants flock, dir or none, not '%s'",
				                       optarg);
			break;
		case 'N':
			o.lock = WL_BATCH_LOCK_NONE;
			break;
		case 'x':
			o.sweep.x_col = optarg;
			break;
		case 'g':
			o.sweep.group_col = optarg;
			break;
		case 'b':
			if (!cli_parse_double(optarg, &o.sweep.body_diameter_m) ||
			    !(o.sweep.body_diameter_m > 0))
				return cli_usage_error(
				        "batch", "--body-m wants a length in metres > 0, not '%s'", optarg);
			po.body = optarg;
			break;
		case 's':
			if (!parse_shard(optarg, &o.shard_index, &o.shard_count))
				return cli_usage_error("batch", "--shard wants K/N with 0 <= K < N, not '%s'",
				                       optarg);
			break;
		case 'q':
			u.quiet = 1;
			break;
		case 'S':
			status = 1;
			break;
		case O_SLURM:
			sl.on = 1;
			break;
		case O_SHARDS:
			if (!cli_parse_int(optarg, &sl.o.shards) || sl.o.shards < 1 || sl.o.shards > 100000)
				return cli_usage_error("batch",
				                       "--shards wants a number from 1 to 100000, not '%s'",
				                       optarg);
			break;
		case O_PARTITION:
			sl.o.partition = optarg;
			break;
		case O_TIME:
			sl.o.time = optarg;
			break;
		case O_MTIME:
			sl.o.merge_time = optarg;
			break;
		case O_CPUS:
			if (!cli_parse_int(optarg, &sl.o.cpus_per_task) || sl.o.cpus_per_task < 1 ||
			    sl.o.cpus_per_task > 4096)
				return cli_usage_error(
				        "batch", "--cpus-per-task wants a number from 1, not '%s'", optarg);
			break;
		case O_MEM:
			sl.o.mem = optarg;
			break;
		case O_ACCOUNT:
			sl.o.account = optarg;
			break;
		case O_LINES:
			sl.o.extra_path = optarg;
			break;
		case O_DRY:
			sl.dry = 1;
			break;
		case 'h':
			fputs(USAGE, stdout);
			return cli_finish("batch", WL_EXIT_OK);
		default:
			return cli_usage_error("batch", "unknown option");
		}
	}
	if (status) {
		if (argc - optind > 1 || (argc - optind == 1 && o.out_dir) || (argc == optind && !o.out_dir))
			return cli_usage_error("batch", "--status wants one OUTDIR (batch --status OUTDIR)");
		return show_status(o.out_dir ? o.out_dir : argv[optind]);
	}
	if (argc - optind != 1)
		return cli_usage_error("batch", "wants one DIR (the folder of clips)");
	if (!o.out_dir)
		return cli_usage_error("batch", "-o OUTDIR is required");
	if (!o.cal_path && !o.manifest_path)
		return cli_usage_error("batch",
		                       "--cal CAL.json is required (or a manifest with a `cal` column)");
	o.clip_dir = argv[optind];
	wl_err_clear(&err);
	if (sl.on)
		return submit_slurm(&sl, &o, &po);
	if (sl.o.shards || sl.dry || sl.o.partition || sl.o.time || sl.o.merge_time || sl.o.cpus_per_task ||
	    sl.o.mem || sl.o.account || sl.o.extra_path)
		return cli_usage_error("batch", "--shards, --partition, --time, --cpus-per-task, --mem, "
		                                "--account, --sbatch-lines and --dry-run go with --slurm");
	{
		/* what changes the outputs besides the clip and its calibration */
		char rh[17] = "";
		if (po.robots && wl_batch_settings_hash(NULL, po.robots, NAN, rh, &err) != WL_OK)
			return cli_fail("batch", &err);
		snprintf(settings, sizeof settings, "wakeline %s process; robots %s; body %s", WL_VERSION, rh,
		         po.body ? po.body : "");
	}
	o.settings = settings;
	o.outputs = OUTPUTS;
	o.fn = batch_clip;
	o.fn_ctx = &po;
	o.on_event = on_event;
	o.ev_ctx = &u;
	cli_progress_init(&u.prog, u.quiet);
	c = wl_batch_run(&o, &res, &err);
	cli_progress_done(&u.prog);
	wl_report_release_caches();
	if (c != WL_OK)
		return cli_fail("batch", &err);
	printf("batch: %zu clips: %zu done, %zu already complete, %zu failed; %zu manifest rows name missing "
	       "clips; "
	       "%zu without a manifest row\n",
	       res.clips, res.done, res.skipped, res.failed, res.missing, res.unlisted);
	printf("batch: %d worker%s at once, %d decoder thread%s each (%d CPU%s this process may use)\n",
	       res.jobs, res.jobs == 1 ? "" : "s", res.threads, res.threads == 1 ? "" : "s", res.cpus,
	       res.cpus == 1 ? "" : "s");
	if (o.shard_count > 1)
		printf("batch: shard %d/%d finished; run `wakeline merge %s` when every shard is done\n",
		       o.shard_index, o.shard_count, o.out_dir);
	else
		printf("batch: %zu runs; see %s/summary.csv and %s/report.html\n", res.runs, o.out_dir,
		       o.out_dir);
	return cli_finish("batch", res.failed || res.missing ? WL_EXIT_FAIL : WL_EXIT_OK);
}
