/*
 * cmd_measure.c: `wakeline measure CLEAN.csv -o SUMMARY.json`, stage 5 of the
 * pipeline: wl_measure_clean (src/measure/measure.h) over the file, then
 * SUMMARY.json (and the per-run table) through formats/summary.h, and the
 * headline run of each robot on standard output.
 */
#include <stdio.h>

#include "cli/cli.h"
#include "cli/print.h"
#include "cli/stageopts.h"
#include "measure/measure.h"

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
	const char *out = NULL, *csv = NULL;
	int quiet = 0, rc, first;
	wl_summary sum;
	wl_err err;
	cli_diag cd;
	const cli_opt own[] = {
	        CLI_OPT_STR("output", 'o', "FILE", "SUMMARY.json to write (required)", &out),
	        CLI_OPT_STR("csv", 0, "FILE", "also write one row per run to FILE (summary.csv's columns)",
	                    &csv),
	        CLI_OPT_FLAG("quiet", 'q', "no summary on standard output", &quiet), CLI_OPT_END};
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
	if (wl_measure_clean(argv[first], &s.p.measure, &sum, &err) != WL_OK ||
	    wl_summary_write(out, csv, &sum, &err) != WL_OK) {
		rc = cli_fail("measure", &err);
	} else {
		for (size_t i = 0; !quiet && i < sum.nruns; i++)
			if (sum.runs[i].headline)
				cli_print_headline(&sum.runs[i]);
		rc = cli_finish("measure", WL_EXIT_OK);
	}
	wl_summary_release(&sum);
	return rc;
}
