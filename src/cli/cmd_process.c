/* cmd_process.c: `wakeline process CLIP --cal CAL.json -o OUTDIR`: one clip
 * through track, clean, measure and the plots: the options parsed here, one
 * call of wl_process_clip (src/pipeline/pipeline.h), what it did printed.
 * The files are byte for byte what track, clean and measure give when run
 * by hand with the same options; `wakeline batch` makes the same call. */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli/cli.h"
#include "cli/print.h"
#include "cli/stageopts.h"
#include "pipeline/pipeline.h"
#include "report/report.h"

const char cmd_process_summary[] = "track, clean and measure one clip, with its plots";

static const char HEAD[] = "usage: wakeline process CLIP --cal CAL.json -o OUTDIR [options]\n"
                           "\n"
                           "Runs one clip through the pipeline and writes into OUTDIR (created):\n"
                           "  raw.csv       the tracker's poses (as wakeline track writes them)\n"
                           "  clean.csv     smoothed, trimmed and segmented (as wakeline clean, with the\n"
                           "  clean.json    tank outline from CAL.json for the wall cut)\n"
                           "  summary.json  the measures of every run (as wakeline measure)\n"
                           "  path_m.svg/.png, heading.svg/.png   the plots (docs/report.md)\n"
                           "The options of track, clean and measure apply as in those commands.\n"
                           "\n";
static const char TAIL[] = "\nExit status: 0 ok, 1 failure (the failing stage says why), 2 usage error.\n";

int cmd_process(int argc, char **argv)
{
	cli_stages s;
	wl_process_result res;
	wl_calib cal;
	wl_err err;
	cli_diag cd;
	const char *cal_path = NULL, *out = NULL;
	int quiet = 0, rc, first;
	const cli_opt own[] = {
	        CLI_OPT_STR("cal", 0, "CAL.json", "calibration (required; read once)", &cal_path),
	        CLI_OPT_STR("out", 'o', "OUTDIR", "output folder (required)", &out),
	        CLI_OPT_FLAG("quiet", 'q', "only errors and warnings", &quiet), CLI_OPT_END};
	const cli_opt *tables[] = {own, s.body, s.track, s.clean, s.measure, NULL};
	cli_stages_init(&s);
	if ((rc = cli_parse("process", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (argc - first != 1)
		return cli_usage_error("process", "wants one CLIP");
	if (!cal_path || !out)
		return cli_usage_error("process", "--cal CAL.json and -o OUTDIR are required");
	if ((rc = cli_stages_finish("process", &s)) != CLI_CONTINUE)
		return rc;
	wl_err_clear(&err);
	if (wl_calib_load(cal_path, &cal, &err) != WL_OK)
		return cli_fail("process", &err);
	s.p.diag = cli_diag_init(&cd, "process", quiet);
	rc = wl_process_clip(argv[first], &cal, cal_path, out, &s.p, &res, &err);
	cli_diag_done(&cd);
	wl_report_release_caches();
	if (rc != WL_OK) {
		wl_process_result_release(&res);
		return cli_fail("process", &err);
	}
	if (!quiet) {
		char raw[4200];
		snprintf(raw, sizeof raw, "%s/%s", out, WL_PROCESS_RAW);
		cli_print_track(raw, &res.track);
		for (size_t k = 0; k < res.clean.nrobots; k++)
			cli_print_clean_robot(&res.clean.robots[k]);
		for (size_t i = 0; i < res.summary.nruns; i++)
			if (res.summary.runs[i].headline)
				cli_print_headline(&res.summary.runs[i]);
		printf("process: %s: raw.csv, clean.csv, clean.json, summary.json and plots in %s\n",
		       argv[first], out);
	}
	wl_process_result_release(&res);
	return cli_finish("process", WL_EXIT_OK);
}
