/* cmd_process.c: `wakeline process CLIP --cal CAL.json -o OUTDIR`: one clip
 * through track, clean and measure, then its plots.  Each stage runs through
 * its own command (cmd_track, cmd_clean, cmd_measure) with the files of
 * DEVELOPERS.md between them, so `process` gives exactly what the three
 * commands give when run by hand; `wakeline batch` runs this per clip. */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "batch/batch.h"
#include "cli/cli.h"
#include "core/afile.h"
#include "report/report.h"

const char cmd_process_summary[] = "track, clean and measure one clip, with its plots";

static const char USAGE[] =
        "usage: wakeline process CLIP --cal CAL.json -o OUTDIR [options]\n"
        "\n"
        "Runs one clip through the pipeline and writes into OUTDIR (created):\n"
        "  raw.csv       the tracker's poses (wakeline track)\n"
        "  clean.csv     smoothed, trimmed and segmented (wakeline clean, with the\n"
        "  clean.json    tank outline from CAL.json for the wall cut)\n"
        "  summary.json  the measures of every run (wakeline measure)\n"
        "  path_m.svg/.png, heading.svg/.png   the plots (docs/report.md)\n"
        "\n"
        "  --cal CAL.json          calibration (required)\n"
        "  -o, --out OUTDIR        output folder (required)\n"
        "  --robots ROBOTS.csv     robots for the tracker (see `wakeline track --help`)\n"
        "  --plane-height-m Z      marker plane height above the floor (default: CAL.json's)\n"
        "  --plane-height-tol-m T  its tolerance, for the uncertainty budget (default 0.002)\n"
        "  --body-diameter-m D     robot size for the wall cut and radius_body_diameters\n"
        "  --threads N             decoder threads (default: all cores)\n"
        "  -q, --quiet             only errors\n"
        "  -h, --help              this text\n"
        "\n"
        "Exit status: 0 ok, 1 failure (the failing stage says why), 2 usage error.\n";

/* Runs a command of this program with a NULL-terminated argument list.
 * The strings stay alive after the call on purpose: glibc's getopt keeps a
 * pointer into the last argument it read, and the next command's
 * `optind = 1` does not reset it. */
static int run_cmd(int (*cmd)(int, char **), const char *const *args)
{
	char *argv[40];
	int argc = 0;
	while (args[argc] && argc < 39) {
		argv[argc] = (char *)args[argc]; /* getopt permutes argv, never the strings */
		argc++;
	}
	argv[argc] = NULL;
	argc = cmd(argc, argv);
	fflush(stdout);
	return argc;
}

int cmd_process(int argc, char **argv)
{
	static const struct option opts[] = {
	        {"cal", required_argument, NULL, 'c'},
	        {"out", required_argument, NULL, 'o'},
	        {"robots", required_argument, NULL, 'r'},
	        {"plane-height-m", required_argument, NULL, 'z'},
	        {"plane-height-tol-m", required_argument, NULL, 'T'},
	        {"body-diameter-m", required_argument, NULL, 'b'},
	        {"threads", required_argument, NULL, 't'},
	        {"quiet", no_argument, NULL, 'q'},
	        {"help", no_argument, NULL, 'h'},
	        {NULL, 0, NULL, 0},
	};
	const char *cal = NULL, *out = NULL, *robots = NULL, *plane = NULL, *plane_tol = NULL, *body = NULL,
	           *threads = NULL, *clip;
	char raw[4200], clean[4200], side[4200], sum[4200];
	const char *args[40];
	int quiet = 0, c, n, rc;
	double dummy;
	wl_report_scene_buf *sb = NULL;
	wl_err err;

	optind = 1;
	while ((c = getopt_long(argc, argv, "o:qh", opts, NULL)) != -1) {
		switch (c) {
		case 'c':
			cal = optarg;
			break;
		case 'o':
			out = optarg;
			break;
		case 'r':
			robots = optarg;
			break;
		case 'z':
			if (!cli_parse_double(optarg, &dummy))
				return cli_usage_error("process", "--plane-height-m wants metres, not '%s'",
				                       optarg);
			plane = optarg;
			break;
		case 'T':
			if (!cli_parse_double(optarg, &dummy) || !(dummy >= 0))
				return cli_usage_error("process",
				                       "--plane-height-tol-m wants metres >= 0, not '%s'",
				                       optarg);
			plane_tol = optarg;
			break;
		case 'b':
			if (!cli_parse_double(optarg, &dummy) || !(dummy > 0))
				return cli_usage_error(
				        "process", "--body-diameter-m wants metres > 0, not '%s'", optarg);
			body = optarg;
			break;
		case 't':
			if (!cli_parse_int(optarg, &n) || n < 0)
				return cli_usage_error("process", "--threads wants a whole number, not '%s'",
				                       optarg);
			threads = optarg;
			break;
		case 'q':
			quiet = 1;
			break;
		case 'h':
			fputs(USAGE, stdout);
			return cli_finish("process", WL_EXIT_OK);
		default:
			return cli_usage_error("process", "unknown option");
		}
	}
	if (argc - optind != 1)
		return cli_usage_error("process", "wants one CLIP");
	if (!cal || !out)
		return cli_usage_error("process", "--cal CAL.json and -o OUTDIR are required");
	clip = argv[optind];
	wl_err_clear(&err);
	if (wl_mkdirs(out, &err) != WL_OK)
		return cli_fail("process", &err);
	snprintf(raw, sizeof raw, "%s/raw.csv", out);
	snprintf(clean, sizeof clean, "%s/clean.csv", out);
	snprintf(side, sizeof side, "%s/clean.json", out);
	snprintf(sum, sizeof sum, "%s/summary.json", out);

	n = 0;
	args[n++] = "track", args[n++] = clip, args[n++] = "--cal", args[n++] = cal, args[n++] = "-o",
	args[n++] = raw;
	if (robots)
		args[n++] = "--robots", args[n++] = robots;
	if (plane)
		args[n++] = "--plane-height-m", args[n++] = plane;
	if (threads)
		args[n++] = "--threads", args[n++] = threads;
	if (quiet)
		args[n++] = "-q";
	args[n] = NULL;
	if ((rc = run_cmd(cmd_track, args)) != WL_EXIT_OK)
		return rc == WL_EXIT_USAGE ? WL_EXIT_FAIL : rc;

	n = 0;
	args[n++] = "clean", args[n++] = raw, args[n++] = "-o", args[n++] = clean, args[n++] = "--sidecar",
	args[n++] = side, args[n++] = "--cal", args[n++] = cal;
	if (body)
		args[n++] = "--body-diameter-m", args[n++] = body;
	if (quiet)
		args[n++] = "-q";
	args[n] = NULL;
	if ((rc = run_cmd(cmd_clean, args)) != WL_EXIT_OK)
		return rc == WL_EXIT_USAGE ? WL_EXIT_FAIL : rc;

	n = 0;
	/* the same calibration and planes as the track: the uncertainty budget */
	args[n++] = "measure", args[n++] = clean, args[n++] = "-o", args[n++] = sum, args[n++] = "--cal",
	args[n++] = cal, args[n++] = "--clean-sidecar", args[n++] = side;
	if (robots)
		args[n++] = "--robots", args[n++] = robots;
	if (plane)
		args[n++] = "--plane-height-m", args[n++] = plane;
	if (plane_tol)
		args[n++] = "--plane-height-tol-m", args[n++] = plane_tol;
	if (body)
		args[n++] = "--body-diameter-m", args[n++] = body;
	if (quiet)
		args[n++] = "-q";
	args[n] = NULL;
	if ((rc = run_cmd(cmd_measure, args)) != WL_EXIT_OK)
		return rc == WL_EXIT_USAGE ? WL_EXIT_FAIL : rc;

	sb = calloc(1, sizeof *sb);
	if (!sb) {
		wl_err_set(&err, WL_ENOMEM, "out of memory for the plots");
		return cli_fail("process", &err);
	}
	wl_report_scene_load(cal, sb, NULL); /* track read it already; without it the plots lack the tank */
	if (body)
		cli_parse_double(body, &sb->scene.body_diameter_m);
	rc = wl_report_clip_plots(out, &sb->scene, &err);
	wl_report_scene_release(sb);
	free(sb);
	wl_report_release_caches();
	if (rc != WL_OK)
		return cli_fail("process", &err);
	if (!quiet)
		printf("process: %s: raw.csv, clean.csv, clean.json, summary.json and plots in %s\n", clip,
		       out);
	return cli_finish("process", WL_EXIT_OK);
}
