/* cmd_merge.c: `wakeline merge OUTDIR`: rebuilds summary.csv, the sweep
 * plots and report.html from the clip folders of a batch's output folder
 * (after shards or cluster jobs wrote them separately). */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "batch/batch.h"
#include "cli/cli.h"

const char cmd_merge_summary[] = "rebuild summary.csv and report.html from a batch's clip folders";

static const char USAGE[] = "usage: wakeline merge OUTDIR [--x COLUMN] [--group COLUMN] [--body-m D]\n"
                            "\n"
                            "Reads OUTDIR/clips/*/clip.json and summary.json (written by `wakeline batch`,\n"
                            "possibly by several shards or cluster jobs) and writes OUTDIR/summary.csv,\n"
                            "OUTDIR/report.html and the sweep plots.  Clip folders without plots get them\n"
                            "drawn from their clean.csv and summary.json.\n"
                            "\n"
                            "  --x COLUMN      manifest column on the sweep plots' x axis\n"
                            "                  (default: the one the batch was given)\n"
                            "  --group COLUMN  manifest column that groups the sweep points\n"
                            "  --body-m D      body diameter in metres for the shaded band\n"
                            "                  (default: from the runs' radius_body_diameters)\n"
                            "  -h, --help      this text\n"
                            "\n"
                            "Exit status: 0 every clip has runs, 1 a clip failed or is missing (or an\n"
                            "error), 2 usage error.\n";

int cmd_merge(int argc, char **argv)
{
	static const struct option opts[] = {
	        {"x", required_argument, NULL, 'x'},
	        {"group", required_argument, NULL, 'g'},
	        {"body-m", required_argument, NULL, 'b'},
	        {"help", no_argument, NULL, 'h'},
	        {NULL, 0, NULL, 0},
	};
	wl_report_sweep_opts so = {NULL, NULL, 0};
	int use_so = 0, c;
	wl_batch_result res;
	wl_err err;

	optind = 1;
	while ((c = getopt_long(argc, argv, "h", opts, NULL)) != -1) {
		switch (c) {
		case 'x':
			so.x_col = optarg;
			use_so = 1;
			break;
		case 'g':
			so.group_col = optarg;
			use_so = 1;
			break;
		case 'b':
			if (!cli_parse_double(optarg, &so.body_diameter_m) || !(so.body_diameter_m > 0))
				return cli_usage_error(
				        "merge", "--body-m wants a length in metres > 0, not '%s'", optarg);
			use_so = 1;
			break;
		case 'h':
			fputs(USAGE, stdout);
			return cli_finish("merge", WL_EXIT_OK);
		default:
			return cli_usage_error("merge", "unknown option");
		}
	}
	if (argc - optind != 1)
		return cli_usage_error("merge", "wants one OUTDIR (the -o folder of a batch)");
	wl_err_clear(&err);
	c = wl_batch_merge(argv[optind], use_so ? &so : NULL, &res, &err);
	wl_report_release_caches();
	if (c != WL_OK)
		return cli_fail("merge", &err);
	printf("merge: %zu runs from %zu clip folders, %zu failed, %zu missing; see %s/report.html\n",
	       res.runs, res.clips, res.failed, res.missing, argv[optind]);
	return cli_finish("merge", res.failed || res.missing ? WL_EXIT_FAIL : WL_EXIT_OK);
}
