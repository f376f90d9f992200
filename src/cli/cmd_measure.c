/*
 * cmd_measure.c: `wakeline measure CLEAN.csv -o SUMMARY.json`, stage 5 of the
 * pipeline: wl_measure_clean (src/measure/measure.h) over the file, then
 * SUMMARY.json (and the per-run table) through formats/summary.h, and the
 * headline run of each robot on standard output.
 */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "calib/calib.h"
#include "cli/cli.h"
#include "core/csvio.h"
#include "measure/measure.h"
#include "track/track.h"

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
        "uncertainty budget (see docs/measure.md):\n"
        "      --cal CAL.json          the calibration the track was made with: adds the\n"
        "                              calibration, plane height, intrinsics and water\n"
        "                              depth to every interval\n"
        "      --plane-height-m H      marker plane height (default: the calibration's)\n"
        "      --plane-height-tol-m T  its tolerance (default 0.002)\n"
        "      --robots ROBOTS.csv     per robot plane_height_m, plane_height_tol_m\n"
        "      --water-depth-tol-m T   the water depth's tolerance (default 0.003)\n"
        "      --hfov-tol F            relative tolerance of a focal length from\n"
        "                              --hfov-deg (default 0.02)\n"
        "      --principal-tol F       of an assumed principal point, share of the\n"
        "                              width (default 0.02)\n"
        "      --clean-sidecar FILE    CLEAN.json for the verdict (default: the input\n"
        "                              with .json, when it exists)\n"
        "  -q, --quiet                 no summary on standard output\n"
        "  -h, --help                  this text\n"
        "\n"
        "exit status: 0 ok, 1 failure, 2 usage error.\n";

static void print_reasons(const wl_measure_result *r)
{
	for (int i = 0; i < r->n_reasons; i++)
		printf("%s %s", i ? ";" : "", r->reasons[i]);
	putchar('\n');
}

static void print_headline(const wl_summary_run *ro)
{
	const wl_measure_result *r = &ro->m;
	char a[WL_NUMBUF], b[WL_NUMBUF], c[WL_NUMBUF], d[WL_NUMBUF], e[WL_NUMBUF];
	printf("id %ld segment %ld (%s s): ", ro->id, ro->segment, wl_fmt_fixed(a, r->duration_s, 1));
	if (r->verdict == WL_VERDICT_REJECT) {
		/* a run the method could not follow is never printed as a number */
		printf("REJECT, no measures reported:");
		print_reasons(r);
		return;
	}
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
	printf(", tracked %s%%", wl_fmt_fixed(a, 100 * r->tracked_fraction, 0));
	if (r->verdict == WL_VERDICT_CHECK) {
		printf("; CHECK:");
		print_reasons(r);
	} else {
		printf("; %s\n", wl_verdict_name(r->verdict));
	}
}

static int nonneg_option(const char *name, const char *arg, double *out)
{
	if (!cli_parse_double(arg, out) || !(*out >= 0) || !isfinite(*out))
		return cli_usage_error("measure", "%s '%s' is not a number >= 0", name, arg);
	return 0;
}

/* CLEAN.json beside CLEAN.csv: the same name with .json (caller frees). */
static char *sidecar_of(const char *csv)
{
	size_t n = strlen(csv);
	const char *slash = strrchr(csv, '/'), *dot = strrchr(csv, '.');
	char *s;
	if (dot && (!slash || dot > slash + 1))
		n = (size_t)(dot - csv);
	if (!(s = malloc(n + 6)))
		return NULL;
	memcpy(s, csv, n);
	strcpy(s + n, ".json");
	return s;
}

/* The robots' marker planes and tolerances from ROBOTS.csv (track's reader). */
static wl_status load_planes(const char *path, wl_measure_plane **out, size_t *n, wl_err *err)
{
	wl_track_opts *to = malloc(sizeof *to);
	wl_status st;
	*out = NULL;
	*n = 0;
	if (!to)
		return wl_err_set(err, WL_ENOMEM, "out of memory");
	wl_track_opts_init(to);
	if (!(st = wl_track_load_robots(path, to, err)) && to->n_robots > 0) {
		if (!(*out = calloc((size_t)to->n_robots, sizeof **out)))
			st = wl_err_set(err, WL_ENOMEM, "out of memory");
		for (int i = 0; !st && i < to->n_robots; i++) {
			(*out)[i].id = to->robots[i].id;
			(*out)[i].plane_height_m = to->robots[i].plane_height_m;
			(*out)[i].plane_height_sd_m = to->robots[i].plane_height_tol_m;
		}
		if (!st)
			*n = (size_t)to->n_robots;
	}
	free(to);
	return st;
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
	        {"cal", required_argument, NULL, 'C'},
	        {"plane-height-m", required_argument, NULL, 'H'},
	        {"plane-height-tol-m", required_argument, NULL, 'T'},
	        {"robots", required_argument, NULL, 'R'},
	        {"water-depth-tol-m", required_argument, NULL, 'W'},
	        {"hfov-tol", required_argument, NULL, 'F'},
	        {"principal-tol", required_argument, NULL, 'P'},
	        {"clean-sidecar", required_argument, NULL, 'S'},
	        {"quiet", no_argument, NULL, 'q'},
	        {"help", no_argument, NULL, 'h'},
	        {NULL, 0, NULL, 0},
	};
	const char *out = NULL, *csv = NULL, *cal_path = NULL, *robots_path = NULL, *side = NULL;
	char *side_alloc = NULL;
	int quiet = 0, opt, rc = WL_EXIT_OK;
	wl_measure_clean_opts mo;
	wl_measure_tolerances tol;
	wl_measure_sys *sys = NULL;
	wl_calib *cal = NULL;
	wl_measure_plane *planes = NULL;
	wl_summary sum;
	wl_err err;
	cli_diag cd;
	wl_measure_clean_opts_init(&mo);
	wl_measure_tolerances_init(&tol);
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
		case 'C':
			cal_path = optarg;
			break;
		case 'H':
			if (nonneg_option("--plane-height-m", optarg, &mo.plane_height_m))
				return WL_EXIT_USAGE;
			break;
		case 'T':
			if (nonneg_option("--plane-height-tol-m", optarg, &tol.plane_height_sd_m))
				return WL_EXIT_USAGE;
			break;
		case 'R':
			robots_path = optarg;
			break;
		case 'W':
			if (nonneg_option("--water-depth-tol-m", optarg, &tol.water_depth_sd_m))
				return WL_EXIT_USAGE;
			break;
		case 'F':
			if (nonneg_option("--hfov-tol", optarg, &tol.focal_sd_frac))
				return WL_EXIT_USAGE;
			break;
		case 'P':
			if (nonneg_option("--principal-tol", optarg, &tol.principal_sd_frac))
				return WL_EXIT_USAGE;
			break;
		case 'S':
			side = optarg;
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
	if (!cal_path && (robots_path || isfinite(mo.plane_height_m)))
		return cli_usage_error("measure",
		                       "--plane-height-m and --robots need the calibration: give --cal");
	mo.diag = cli_diag_init(&cd, "measure", quiet);
	wl_err_clear(&err);
	if (!side && (side_alloc = sidecar_of(argv[optind])) && access(side_alloc, R_OK) == 0)
		side = side_alloc;
	mo.clean_sidecar = side;
	if (cal_path) {
		if (!(cal = malloc(sizeof *cal))) {
			wl_err_set(&err, WL_ENOMEM, "out of memory");
			rc = cli_fail("measure", &err);
			goto done;
		}
		if (wl_calib_load(cal_path, cal, &err) != WL_OK ||
		    (robots_path && load_planes(robots_path, &planes, &mo.nplanes, &err) != WL_OK) ||
		    wl_measure_sys_create(cal, &tol, &sys, &err) != WL_OK) {
			rc = cli_fail("measure", &err);
			goto done;
		}
		mo.sys = sys;
		mo.cal = cal;
		mo.planes = planes;
	}
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
	wl_measure_sys_destroy(sys);
	free(cal);
	free(planes);
	free(side_alloc);
	return rc;
}
