/* cmd_merge.c: `wakeline merge OUTDIR`: rebuilds summary.csv, the sweep
 * plots and report.html from the clip folders of a batch's output folder
 * (after shards or cluster jobs wrote them separately). */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "batch/batch.h"
#include "cli/cli.h"

const char cmd_merge_summary[] = "rebuild summary.csv and report.html from a batch's clip folders";

static const char HEAD[] =
        "usage: wakeline merge OUTDIR [--x COLUMN] [--group COLUMN] [--body-diameter-m D]\n"
        "\n"
        "Reads OUTDIR/clips/*/clip.json and summary.json (written by `wakeline batch`,\n"
        "possibly by several shards or cluster jobs) and writes OUTDIR/summary.csv,\n"
        "OUTDIR/report.html and the sweep plots.  Clip folders without plots get them\n"
        "drawn from their clean.csv and summary.json.\n"
        "\n";
static const char TAIL[] = "\nExit status: 0 every clip has runs, 1 a clip failed or is missing (or an\n"
                           "error), 2 usage error.\n";

int cmd_merge(int argc, char **argv)
{
	wl_report_sweep_opts so = {NULL, NULL, 0};
	int use_so = 0, rc, first;
	wl_batch_result res;
	wl_err err;
	cli_opt tab[] = {
	        CLI_OPT_STR(
	                "x", 0, "COLUMN",
	                "manifest column on the sweep plots' x axis\n(default: the one the batch was given)",
	                &so.x_col),
	        CLI_OPT_STR("group", 0, "COLUMN", "manifest column that groups the sweep points",
	                    &so.group_col),
	        CLI_OPT_POS("body-diameter-m", "D",
	                    "body diameter in metres for the shaded band\n(default: from the runs' "
	                    "radius_body_diameters)",
	                    &so.body_diameter_m),
	        CLI_OPT_END};
	const cli_opt *tables[] = {tab, NULL};
	tab[0].seen = tab[1].seen = tab[2].seen = &use_so;
	tab[2].alias = "body-m";
	if ((rc = cli_parse("merge", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (argc - first != 1)
		return cli_usage_error("merge", "wants one OUTDIR (the -o folder of a batch)");
	wl_err_clear(&err);
	rc = wl_batch_merge(argv[first], use_so ? &so : NULL, &res, &err);
	wl_report_release_caches();
	if (rc != WL_OK)
		return cli_fail("merge", &err);
	printf("merge: %zu runs from %zu clip folders, %zu failed, %zu missing; see %s/report.html\n",
	       res.runs, res.clips, res.failed, res.missing, argv[first]);
	return cli_finish("merge", res.failed || res.missing ? WL_EXIT_FAIL : WL_EXIT_OK);
}
