/*
 * cmd_measure.c: `wakeline measure CLEAN.csv -o SUMMARY.json`, stage 5 of the
 * pipeline: wl_measure_clean (src/measure/measure.h) over the file, then
 * SUMMARY.json (and the per-run table) through formats/summary.h, and the
 * headline run of each robot on standard output.
 */
#include <getopt.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "core/csvio.h"
#include "measure/measure.h"

const char cmd_measure_summary[] = "per-run measures (turning radius, speed, oscillation) from CLEAN.csv";

static const char usage_text[] =
        "usage: wakeline measure CLEAN.csv -o SUMMARY.json [options]\n"
        "\n"
        "Measures every analysed segment (segment >= 0) of every robot in CLEAN.csv:\n"
        "signed turning radius and curvature with a 95% interval, arc, path length,\n"
        "straightness, speed, yaw rate, heading drift, and the yaw and sway\n"
        "oscillation.  Each robot's longest segment is marked \"headline\": true and\n"
        "summarised on standard output.  Methods: docs/measure.md.\n"
        "\n"
        "options:\n"
        "  -o, --output FILE           SUMMARY.json to write (required)\n"
        "      --csv FILE              also write one row per run to FILE\n"
        "      --body-diameter-m D     body size, for radius_body_diameters\n"
        "      --commanded-period-s P  oscillation period the robot was commanded,\n"
        "                              compared with the measured one\n"
        "      --min-arc-deg A         arcs shorter than A degrees count as straight\n"
        "                              (default 5)\n"
        "  -q, --quiet                 no summary on standard output\n"
        "  -h, --help                  this text\n"
        "\n"
        "exit status: 0 ok, 1 failure, 2 usage error.\n";

static void print_headline(const wl_summary_run *ro)
{
	const wl_measure_result *r = &ro->m;
	char a[WL_NUMBUF], b[WL_NUMBUF], c[WL_NUMBUF], d[WL_NUMBUF], e[WL_NUMBUF];
	printf("id %ld segment %ld (%s s): ", ro->id, ro->segment, wl_fmt_fixed(a, r->duration_s, 1));
	if (r->straight)
		printf("straight (curvature %s /m, 95%% [%s, %s])", wl_fmt_fixed(a, r->curvature_per_m, 4),
		       wl_fmt_fixed(b, r->curvature_ci95_per_m[0], 4),
		       wl_fmt_fixed(c, r->curvature_ci95_per_m[1], 4));
	else
		printf("radius %s m %s (curvature %s /m, 95%% [%s, %s], arc %s deg)",
		       wl_fmt_fixed(a, r->radius_m, 3), r->radius_m > 0 ? "counter-clockwise" : "clockwise",
		       wl_fmt_fixed(b, r->curvature_per_m, 4), wl_fmt_fixed(c, r->curvature_ci95_per_m[0], 4),
		       wl_fmt_fixed(d, r->curvature_ci95_per_m[1], 4), wl_fmt_fixed(e, r->arc_deg, 0));
	printf(", speed %s m/s", wl_fmt_fixed(a, r->mean_speed_mps, 3));
	if (isfinite(r->yaw_osc_freq_hz))
		printf(", yaw %s deg at %s Hz", wl_fmt_fixed(a, r->yaw_osc_amp_deg, 1),
		       wl_fmt_fixed(b, r->yaw_osc_freq_hz, 2));
	if (isfinite(r->sway_amp_m))
		printf(", sway %s mm", wl_fmt_fixed(a, 1000 * r->sway_amp_m, 1));
	printf(", tracked %s%%\n", wl_fmt_fixed(a, 100 * r->tracked_fraction, 0));
}

static int positive_option(const char *name, const char *arg, double *out)
{
	if (!cli_parse_double(arg, out) || !(*out > 0) || !isfinite(*out))
		return cli_usage_error("measure", "%s '%s' is not a positive number", name, arg);
	return 0;
}

int cmd_measure(int argc, char **argv)
{
	static const struct option longopts[] = {
	        {"output", required_argument, NULL, 'o'},
	        {"csv", required_argument, NULL, 'c'},
	        {"body-diameter-m", required_argument, NULL, 'b'},
	        {"commanded-period-s", required_argument, NULL, 'p'},
	        {"min-arc-deg", required_argument, NULL, 'a'},
	        {"quiet", no_argument, NULL, 'q'},
	        {"help", no_argument, NULL, 'h'},
	        {NULL, 0, NULL, 0},
	};
	const char *out = NULL, *csv = NULL;
	int quiet = 0, opt, rc = WL_EXIT_OK;
	wl_measure_clean_opts mo;
	wl_summary sum;
	wl_err err;
	cli_diag cd;
	wl_measure_clean_opts_init(&mo);
	wl_summary_init(&sum);
	optind = 1;
	opterr = 0;
	while ((opt = getopt_long(argc, argv, ":o:qh", longopts, NULL)) != -1) {
		switch (opt) {
		case 'o':
			out = optarg;
			break;
		case 'c':
			csv = optarg;
			break;
		case 'b':
			if (positive_option("--body-diameter-m", optarg, &mo.run.body_diameter_m))
				return WL_EXIT_USAGE;
			break;
		case 'p':
			if (positive_option("--commanded-period-s", optarg, &mo.commanded_period_s))
				return WL_EXIT_USAGE;
			break;
		case 'a':
			if (positive_option("--min-arc-deg", optarg, &mo.run.min_arc_deg))
				return WL_EXIT_USAGE;
			break;
		case 'q':
			quiet = 1;
			break;
		case 'h':
			fputs(usage_text, stdout);
			return cli_finish("measure", WL_EXIT_OK);
		case ':':
			return cli_usage_error("measure", "option '%s' needs a value", argv[optind - 1]);
		default:
			return cli_usage_error("measure", "unknown option '%s'", argv[optind - 1]);
		}
	}
	if (optind != argc - 1)
		return cli_usage_error("measure", optind >= argc ? "give the CLEAN.csv to measure"
		                                                 : "give exactly one CLEAN.csv");
	if (!out)
		return cli_usage_error("measure", "give the output file with -o SUMMARY.json");
	mo.diag = cli_diag_init(&cd, "measure", quiet);
	wl_err_clear(&err);
	if (wl_measure_clean(argv[optind], &mo, &sum, &err) != WL_OK ||
	    wl_summary_write(out, csv, &sum, &err) != WL_OK) {
		rc = cli_fail("measure", &err);
		goto done;
	}
	if (!quiet)
		for (size_t i = 0; i < sum.nruns; i++)
			if (sum.runs[i].headline)
				print_headline(&sum.runs[i]);
	rc = cli_finish("measure", WL_EXIT_OK);
done:
	wl_summary_release(&sum);
	return rc;
}
