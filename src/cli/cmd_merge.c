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
        "usage: wakeline merge OUTDIR [--partial] [--x COLUMN] [--group COLUMN] [--body-diameter-m D]\n"
        "\n"
        "Reads OUTDIR/clips/*/clip.json and summary.json (written by `wakeline batch`,\n"
        "possibly by several shards or cluster jobs) and writes OUTDIR/summary.csv,\n"
        "OUTDIR/report.html and the sweep plots.  Clip folders without plots get them\n"
        "drawn from their clean.csv and summary.json.\n"
        "\n"
        "Every clip of the sweep that failed or has no result is listed, with its\n"
        "message, here, in summary.csv (status failed or missing) and in the report:\n"
        "OUTDIR/batch.json names every clip of the sweep, so the clips of a shard that\n"
        "never ran are listed too, with the shard to run again.\n"
        "\n";
static const char TAIL[] = "\nExit status: 0 every clip has runs (or --partial), 1 a clip failed or is\n"
                           "missing (or an error), 2 usage error.\n";

static void on_problem(const char *clip, const char *status, const char *msg, void *ctx)
{
	(void)ctx;
	printf("merge: %-7s %s: %s\n", status, clip, msg);
}

int cmd_merge(int argc, char **argv)
{
	wl_report_sweep_opts so = {NULL, NULL, 0};
	int use_so = 0, partial = 0, rc, first;
	wl_batch_result res;
	wl_err err;
	cli_opt tab[] = {
	        CLI_OPT_FLAG("partial", 0,
	                     "exit 0 even when clips failed or are missing (a look at a\nsweep that is "
	                     "still running, or a report despite them)",
	                     &partial),
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
	tab[1].seen = tab[2].seen = tab[3].seen = &use_so;
	tab[3].alias = "body-m";
	if ((rc = cli_parse("merge", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (argc - first != 1)
		return cli_usage_error("merge", "wants one OUTDIR (the -o folder of a batch)");
	wl_err_clear(&err);
	rc = wl_batch_merge_report(argv[first], use_so ? &so : NULL, on_problem, NULL, &res, &err);
	wl_report_release_caches();
	if (rc != WL_OK)
		return cli_fail("merge", &err);
	printf("merge: %zu runs from %zu clip folders, %zu failed, %zu missing; see %s/report.html\n",
	       res.runs, res.clips, res.failed, res.missing, argv[first]);
	if ((res.failed || res.missing) && !partial)
		fprintf(stderr,
		        "wakeline merge: %zu clips failed and %zu are missing (listed above, in summary.csv "
		        "and the report): run their shards again, or give --partial to accept a partial "
		        "sweep\n",
		        res.failed, res.missing);
	return cli_finish("merge", (res.failed || res.missing) && !partial ? WL_EXIT_FAIL : WL_EXIT_OK);
}
