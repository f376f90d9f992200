/* cmd_batch.c: `wakeline batch DIR --cal CAL.json -o OUT`: every clip under
 * DIR through track, clean, measure and the plots, in parallel worker
 * processes, resumable, then summary.csv and report.html. */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "batch/batch.h"
#include "cli/cli.h"
#include "core/afile.h"
#include "core/csvio.h"
#include "wl_version.h"

const char cmd_batch_summary[] =
        "process every clip of a folder (resumable), then summary.csv and report.html";

static const char USAGE[] =
        "usage: wakeline batch DIR --cal CAL.json -o OUTDIR [options]\n"
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
        "  -j, --jobs N          clips processed at once (default: the number of cores)\n"
        "  --force               redo clips that are complete\n"
        "  --x COLUMN            manifest column on the sweep plots' x axis\n"
        "  --group COLUMN        manifest column that groups the sweep points\n"
        "  --body-m D            body diameter (m): the wall cut, radius_body_diameters\n"
        "                        and the sweep plots' shaded band\n"
        "  --shard K/N           process only clips K, K+N, K+2N... (0 <= K < N) of the\n"
        "                        sorted list, for job arrays; run `wakeline merge OUTDIR`\n"
        "                        when all shards are done\n"
        "  -q, --quiet           no progress line\n"
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
	char threads[16];
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
	/* the last line with an "error: " prefix; the first one in the line
	 * ("Input/output error: ..." later in a message is not a prefix) */
	for (p = text; *p; p++)
		if ((p == text || p[-1] == '\n') && *p != '\n') {
			size_t n = strcspn(p, "\n");
			last = p;
			for (size_t k = 0; k + 7 <= n; k++)
				if (memcmp(p + k, "error: ", 7) == 0) {
					best = p + k + 7;
					break;
				}
		}
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
	char log[4200], plane[WL_NUMBUF], msg[400];
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
	args[n++] = "-o", args[n++] = job->out_dir, args[n++] = "-q", args[n++] = "--threads",
	args[n++] = po->threads;
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

static int parse_shard(const char *s, int *k, int *n)
{
	char tail;
	return sscanf(s, "%d/%d%c", k, n, &tail) == 2 && *n >= 1 && *k >= 0 && *k < *n;
}

int cmd_batch(int argc, char **argv)
{
	static const struct option opts[] = {
	        {"cal", required_argument, NULL, 'c'},
	        {"manifest", required_argument, NULL, 'm'},
	        {"robots", required_argument, NULL, 'r'},
	        {"out", required_argument, NULL, 'o'},
	        {"jobs", required_argument, NULL, 'j'},
	        {"force", no_argument, NULL, 'f'},
	        {"x", required_argument, NULL, 'x'},
	        {"group", required_argument, NULL, 'g'},
	        {"body-m", required_argument, NULL, 'b'},
	        {"shard", required_argument, NULL, 's'},
	        {"quiet", no_argument, NULL, 'q'},
	        {"help", no_argument, NULL, 'h'},
	        {NULL, 0, NULL, 0},
	};
	wl_batch_opts o;
	proc_opts po;
	wl_batch_result res;
	char settings[2048];
	ui u;
	wl_err err;
	int c;

	memset(&o, 0, sizeof o);
	memset(&u, 0, sizeof u);
	memset(&po, 0, sizeof po);
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
		case 'f':
			o.force = 1;
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
		case 'h':
			fputs(USAGE, stdout);
			return cli_finish("batch", WL_EXIT_OK);
		default:
			return cli_usage_error("batch", "unknown option");
		}
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
	{
		/* what changes the outputs besides the clip and its calibration */
		char rh[17] = "";
		long cores = sysconf(_SC_NPROCESSORS_ONLN);
		int jobs = o.jobs > 0 ? o.jobs : (int)(cores > 0 ? cores : 1);
		if (po.robots && wl_batch_settings_hash(NULL, po.robots, NAN, rh, &err) != WL_OK)
			return cli_fail("batch", &err);
		snprintf(settings, sizeof settings, "wakeline %s process; robots %s; body %s", WL_VERSION, rh,
		         po.body ? po.body : "");
		snprintf(po.threads, sizeof po.threads, "%ld", cores > jobs ? cores / jobs : 1L);
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
	if (o.shard_count > 1)
		printf("batch: shard %d/%d finished; run `wakeline merge %s` when every shard is done\n",
		       o.shard_index, o.shard_count, o.out_dir);
	else
		printf("batch: %zu runs; see %s/summary.csv and %s/report.html\n", res.runs, o.out_dir,
		       o.out_dir);
	return cli_finish("batch", res.failed || res.missing ? WL_EXIT_FAIL : WL_EXIT_OK);
}
