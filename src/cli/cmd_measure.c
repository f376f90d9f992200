/*
 * cmd_measure.c: `wakeline measure CLEAN.csv -o SUMMARY.json`, stage 5 of the
 * pipeline: wl_measure_clean (src/measure/measure.h) over the file, then
 * SUMMARY.json (and the per-run table) through formats/summary.h, and the
 * headline run of each robot on standard output.
 */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli/cli.h"
#include "cli/print.h"
#include "cli/stageopts.h"
#include "formats/format.h"
#include "measure/measure.h"
#include "pipeline/pipeline.h"

const char cmd_measure_summary[] = "per-run measures (turning radius, speed, oscillation) from CLEAN.csv";

static const char HEAD[] = "usage: wakeline measure CLEAN.csv -o SUMMARY.json [options]\n"
                           "\n"
                           "Measures every analysed segment (segment >= 0) of every robot in CLEAN.csv:\n"
                           "signed turning radius and curvature with a 95% interval, arc, path length,\n"
                           "straightness, speed, yaw rate, heading drift, and the yaw and sway\n"
                           "oscillation.  Each robot's longest segment is marked \"headline\": true and\n"
                           "summarised on standard output.  Methods: docs/measure.md.\n"
                           "\n";

static const char TAIL[] = "\nexit status: 0 ok, 1 failure, 2 usage error.\n";

int cmd_measure(int argc, char **argv)
{
	cli_stages s;
	const char *out = NULL, *csv = NULL, *cal_path = NULL, *side = NULL;
	char side_buf[4096];
	int quiet = 0, rc, first;
	wl_calib *cal = NULL;
	wl_process_budget b = {0};
	wl_summary sum;
	wl_err err;
	cli_diag cd;
	const cli_opt own[] = {
	        CLI_OPT_STR("output", 'o', "FILE", "SUMMARY.json to write (required)", &out),
	        CLI_OPT_STR("csv", 0, "FILE", "also write one row per run to FILE (summary.csv's columns)",
	                    &csv),
	        CLI_OPT_STR("cal", 0, "CAL.json",
	                    "the calibration the track was made with: adds the\ncalibration, plane "
	                    "height, intrinsics and water\ndepth to every interval",
	                    &cal_path),
	        CLI_OPT_STR("robots", 0, "ROBOTS.csv", "per robot plane_height_m, plane_height_tol_m",
	                    &s.robots),
	        CLI_OPT_NUM("plane-height-m", "Z", "marker plane height (default: CAL.json's)",
	                    &s.p.track.plane_height_m, -10, 10),
	        CLI_OPT_STR("clean-sidecar", 0, "FILE",
	                    "CLEAN.json for the verdict (default: the input\nwith .json, when it exists)",
	                    &side),
	        CLI_OPT_FLAG("quiet", 'q', "no summary on standard output", &quiet),
	        CLI_OPT_END};
	const cli_opt *tables[] = {own, s.body, s.measure, NULL};
	cli_stages_init(&s);
	if ((rc = cli_parse("measure", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (first != argc - 1)
		return cli_usage_error("measure", first >= argc ? "give the CLEAN.csv to measure"
		                                                : "give exactly one CLEAN.csv");
	if (!out)
		return cli_usage_error("measure", "give the output file with -o SUMMARY.json");
	if ((rc = cli_stages_finish("measure", &s)) != CLI_CONTINUE)
		return rc;
	s.p.measure.diag = cli_diag_init(&cd, "measure", quiet);
	wl_err_clear(&err);
	wl_summary_init(&sum);
	if (!side && wl_format_sidecar_path(argv[first], side_buf, sizeof side_buf) &&
	    access(side_buf, R_OK) == 0)
		side = side_buf;
	s.p.measure.clean_sidecar = side;
	if (cal_path && !(cal = malloc(sizeof *cal))) {
		wl_err_set(&err, WL_ENOMEM, "out of memory for '%s'", cal_path);
		return cli_fail("measure", &err);
	}
	if ((cal_path &&
	     (wl_calib_load(cal_path, cal, &err) != WL_OK ||
	      wl_process_budget_setup(cal, &s.p.track, &s.p.tol, &s.p.measure, &b, &err) != WL_OK)) ||
	    wl_measure_clean(argv[first], &s.p.measure, &sum, &err) != WL_OK ||
	    wl_summary_write(out, csv, &sum, &err) != WL_OK) {
		rc = cli_fail("measure", &err);
	} else {
		for (size_t i = 0; !quiet && i < sum.nruns; i++)
			if (sum.runs[i].headline)
				cli_print_headline(&sum.runs[i]);
		rc = cli_finish("measure", WL_EXIT_OK);
	}
	wl_summary_release(&sum);
	wl_process_budget_release(&b);
	if (cal)
		wl_calib_release(cal);
	free(cal);
	return rc;
}
