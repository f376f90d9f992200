/* cmd_clean.c: `wakeline clean RAW.csv -o CLEAN.csv`: smoothing, outliers,
 * gaps, segments and trimming (src/clean/clean.h; docs/clean.md). */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "clean/clean.h"
#include "cli/cli.h"
#include "core/angle.h"
#include "formats/cal.h"

const char cmd_clean_summary[] =
        "smooth tracks, reject outliers, bridge gaps, trim and segment (RAW.csv -> CLEAN.csv)";

static const char USAGE[] =
        "usage: wakeline clean RAW.csv -o CLEAN.csv [options]\n"
        "\n"
        "Smooths each robot's track (Rauch-Tung-Striebel by default), rejects\n"
        "outlying detections, bridges short gaps, splits at long ones, trims the\n"
        "start to steady motion and cuts the end at the tank wall.  Writes CLEAN.csv\n"
        "and a JSON sidecar with every parameter and what was cut.  See docs/clean.md.\n"
        "\n"
        "Output:\n"
        "  -o, --output FILE          CLEAN.csv to write (required)\n"
        "  -j, --sidecar FILE         sidecar (default: the output with .json)\n"
        "      --rate HZ              resample evenly at HZ from the smoothed state\n"
        "Smoothing:\n"
        "      --smoother rts|sg      Rauch-Tung-Striebel (default) or Savitzky-Golay\n"
        "      --model cv|ca          constant velocity (default) or acceleration (rts)\n"
        "      --sg-window N          Savitzky-Golay points, odd (default 11)\n"
        "      --sg-order P           Savitzky-Golay polynomial order (default 2)\n"
        "      --sigma-pos-m S        position noise (default: estimated)\n"
        "      --sigma-heading-rad S  heading noise (default: estimated)\n"
        "      --q-pos Q              process noise, m^2/s^3 (default: max. likelihood)\n"
        "      --q-heading Q          process noise, rad^2/s^3 (default: max. likelihood)\n"
        "      --gate P               chi-square gate probability (default 0.999)\n"
        "      --max-reject F         widen the noise model when more than this share\n"
        "                             of the detections would be rejected (default 0.03)\n"
        "Gaps and trimming:\n"
        "      --max-gap-s S          bridge gaps up to S seconds (default 0.5)\n"
        "      --min-segment-s S      leave out shorter segments (default 1.0)\n"
        "      --trim auto|none|S     start: steady motion (default), none, or S seconds\n"
        "      --settle-tol F         relative speed tolerance when steady (default 0.02)\n"
        "      --default-window-s S   settling window without oscillation (default 1.0)\n"
        "Tank wall:\n"
        "      --cal CAL.json         tank outline from key tank_outline_m\n"
        "      --tank X0,Y0,X1,Y1     tank rectangle in metres\n"
        "      --body-diameter-m D    robot size (default 0.1)\n"
        "      --wall-margin-m M      cut when closer (default: half the body diameter)\n"
        "  -q, --quiet                no summary lines\n"
        "  -h, --help                 this text\n"
        "\n"
        "Exit status: 0 ok, 1 failure (nothing written), 2 usage error.\n";

enum {
	O_RATE = 256,
	O_SMOOTHER,
	O_MODEL,
	O_SGW,
	O_SGO,
	O_SIGP,
	O_SIGH,
	O_QP,
	O_QH,
	O_GATE,
	O_MAXREJ,
	O_GAP,
	O_MINSEG,
	O_TRIM,
	O_SETTLE,
	O_DEFWIN,
	O_CAL,
	O_TANK,
	O_BODY,
	O_MARGIN
};

static const struct option OPTS[] = {{"output", required_argument, NULL, 'o'},
                                     {"sidecar", required_argument, NULL, 'j'},
                                     {"rate", required_argument, NULL, O_RATE},
                                     {"smoother", required_argument, NULL, O_SMOOTHER},
                                     {"model", required_argument, NULL, O_MODEL},
                                     {"sg-window", required_argument, NULL, O_SGW},
                                     {"sg-order", required_argument, NULL, O_SGO},
                                     {"sigma-pos-m", required_argument, NULL, O_SIGP},
                                     {"sigma-heading-rad", required_argument, NULL, O_SIGH},
                                     {"q-pos", required_argument, NULL, O_QP},
                                     {"q-heading", required_argument, NULL, O_QH},
                                     {"gate", required_argument, NULL, O_GATE},
                                     {"max-reject", required_argument, NULL, O_MAXREJ},
                                     {"max-gap-s", required_argument, NULL, O_GAP},
                                     {"min-segment-s", required_argument, NULL, O_MINSEG},
                                     {"trim", required_argument, NULL, O_TRIM},
                                     {"settle-tol", required_argument, NULL, O_SETTLE},
                                     {"default-window-s", required_argument, NULL, O_DEFWIN},
                                     {"cal", required_argument, NULL, O_CAL},
                                     {"tank", required_argument, NULL, O_TANK},
                                     {"body-diameter-m", required_argument, NULL, O_BODY},
                                     {"wall-margin-m", required_argument, NULL, O_MARGIN},
                                     {"quiet", no_argument, NULL, 'q'},
                                     {"help", no_argument, NULL, 'h'},
                                     {NULL, 0, NULL, 0}};

static int parse_tank(const char *s, wl_clean_params *p)
{
	double v[4];
	char buf[256], *tok, *save = NULL;
	int n = 0;
	if (strlen(s) >= sizeof buf)
		return 0;
	strcpy(buf, s);
	for (tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save)) {
		if (n == 4 || !cli_parse_double(tok, &v[n]))
			return 0;
		n++;
	}
	if (n != 4 || !(v[2] > v[0]) || !(v[3] > v[1]))
		return 0;
	p->n_outline = 4;
	p->outline_m[0][0] = v[0], p->outline_m[0][1] = v[1];
	p->outline_m[1][0] = v[2], p->outline_m[1][1] = v[1];
	p->outline_m[2][0] = v[2], p->outline_m[2][1] = v[3];
	p->outline_m[3][0] = v[0], p->outline_m[3][1] = v[3];
	return 1;
}

static char *default_sidecar(const char *csv)
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

static void summary(const wl_clean_robot *rb)
{
	if (rb->rows_out == 0 && rb->measured == 0) {
		printf("robot %ld: no detections in %zu rows; not analysed\n", rb->id, rb->rows_in);
		return;
	}
	if (rb->trim_reason && strcmp(rb->trim_reason, "too-short") == 0) {
		printf("robot %ld: too short (%zu rows, %.3f s): not analysed\n", rb->id, rb->rows_in,
		       rb->t_last_s - rb->t_first_s);
		return;
	}
	if (rb->still) {
		printf("robot %ld: %s: %zu rows, never moved faster than %.4f m/s; not analysed\n", rb->id,
		       rb->trim_reason, rb->rows_in,
		       isfinite(rb->speed_threshold_mps) ? rb->speed_threshold_mps : 0.0);
		return;
	}
	printf("robot %ld: %zu rows (%zu measured, %zu filled, %zu outliers), %zu gaps (%zu filled, %zu "
	       "split); "
	       "start cut at %.3f s (%s",
	       rb->id, rb->rows_out, rb->measured, rb->filled, rb->outliers, rb->ngaps, rb->gaps_filled,
	       rb->gaps_split, rb->trim_s, rb->trim_reason);
	if (isfinite(rb->period_s))
		printf(", period %.3f s", rb->period_s);
	printf("); ");
	if (isfinite(rb->wall_s))
		printf("end cut at %.3f s (wall)", rb->wall_s);
	else
		printf("end not cut (%s)", rb->end_reason);
	printf("; %zu segment%s; noise %.2f mm, %.2f deg%s\n", rb->nsegments, rb->nsegments == 1 ? "" : "s",
	       rb->sigma_pos_m * 1e3, rb->sigma_heading_rad / WL_DEG,
	       rb->widen_pos || rb->widen_heading ? " (widened)" : "");
}

static int set_num(const char *opt, const char *arg, double *out)
{
	if (!cli_parse_double(arg, out))
		return cli_usage_error("clean", "--%s '%s': not a number", opt, arg);
	return 0;
}

int cmd_clean(int argc, char **argv)
{
	wl_clean_params p;
	wl_clean_source src = {0};
	wl_clean_result res = {0};
	wl_clean_raw *raw = NULL;
	wl_cal_doc doc = {0};
	wl_cal_outline outline;
	wl_err err = {0};
	cli_diag cd;
	const wl_diag *diag;
	const char *out = NULL, *side = NULL, *cal = NULL;
	char *side_alloc = NULL;
	int quiet = 0, c, rc = WL_EXIT_OK, have_tank = 0;
	wl_clean_params_init(&p);
	optind = 1;
	while ((c = getopt_long(argc, argv, "o:j:qh", OPTS, NULL)) != -1) {
		double v;
		int e = 0;
		switch (c) {
		case 'o':
			out = optarg;
			break;
		case 'j':
			side = optarg;
			break;
		case 'q':
			quiet = 1;
			break;
		case 'h':
			fputs(USAGE, stdout);
			return cli_finish("clean", WL_EXIT_OK);
		case O_RATE:
			e = set_num("rate", optarg, &p.rate_hz);
			break;
		case O_SMOOTHER:
			if (strcmp(optarg, "rts") == 0)
				p.smoother = WL_CLEAN_RTS;
			else if (strcmp(optarg, "sg") == 0)
				p.smoother = WL_CLEAN_SG;
			else
				return cli_usage_error("clean", "--smoother '%s': give 'rts' or 'sg'",
				                       optarg);
			break;
		case O_MODEL:
			if (strcmp(optarg, "cv") == 0)
				p.model_dim = 2;
			else if (strcmp(optarg, "ca") == 0)
				p.model_dim = 3;
			else
				return cli_usage_error("clean", "--model '%s': give 'cv' or 'ca'", optarg);
			break;
		case O_SGW:
			if (!cli_parse_int(optarg, &p.sg_window))
				return cli_usage_error("clean", "--sg-window '%s': not a whole number",
				                       optarg);
			break;
		case O_SGO:
			if (!cli_parse_int(optarg, &p.sg_order))
				return cli_usage_error("clean", "--sg-order '%s': not a whole number",
				                       optarg);
			break;
		case O_SIGP:
			e = set_num("sigma-pos-m", optarg, &p.sigma_pos_m);
			break;
		case O_SIGH:
			e = set_num("sigma-heading-rad", optarg, &p.sigma_heading_rad);
			break;
		case O_QP:
			e = set_num("q-pos", optarg, &p.q_pos);
			break;
		case O_QH:
			e = set_num("q-heading", optarg, &p.q_heading);
			break;
		case O_GATE:
			e = set_num("gate", optarg, &p.gate_prob);
			break;
		case O_MAXREJ:
			e = set_num("max-reject", optarg, &p.max_reject_frac);
			break;
		case O_GAP:
			e = set_num("max-gap-s", optarg, &p.max_gap_s);
			break;
		case O_MINSEG:
			e = set_num("min-segment-s", optarg, &p.min_segment_s);
			break;
		case O_SETTLE:
			e = set_num("settle-tol", optarg, &p.settle_tol);
			break;
		case O_DEFWIN:
			e = set_num("default-window-s", optarg, &p.default_window_s);
			break;
		case O_BODY:
			e = set_num("body-diameter-m", optarg, &p.body_diameter_m);
			break;
		case O_MARGIN:
			e = set_num("wall-margin-m", optarg, &p.wall_margin_m);
			break;
		case O_TRIM:
			if (strcmp(optarg, "auto") == 0)
				p.trim = WL_TRIM_AUTO;
			else if (strcmp(optarg, "none") == 0)
				p.trim = WL_TRIM_NONE;
			else if (cli_parse_double(optarg, &v) && v >= 0) {
				p.trim = WL_TRIM_FIXED;
				p.trim_s = v;
			} else
				return cli_usage_error("clean", "--trim '%s': give auto, none or seconds",
				                       optarg);
			break;
		case O_CAL:
			cal = optarg;
			break;
		case O_TANK:
			if (!parse_tank(optarg, &p))
				return cli_usage_error(
				        "clean", "--tank '%s': give X0,Y0,X1,Y1 in metres with X1>X0, Y1>Y0",
				        optarg);
			have_tank = 1;
			break;
		default:
			return cli_usage_error("clean", "unknown option");
		}
		if (e)
			return e;
	}
	if (optind != argc - 1)
		return cli_usage_error("clean", "give exactly one RAW.csv");
	if (!out)
		return cli_usage_error("clean", "give the output file with -o CLEAN.csv");
	if (cal && have_tank)
		return cli_usage_error("clean", "give either --cal or --tank, not both");
	if (!side && !(side = side_alloc = default_sidecar(out))) {
		err.code = WL_ENOMEM;
		snprintf(err.msg, sizeof err.msg, "out of memory");
		return cli_fail("clean", &err);
	}
	if (strcmp(side, out) == 0)
		return cli_usage_error("clean", "the sidecar '%s' would overwrite the output", side);
	if (wl_clean_params_check(&p, &err)) {
		free(side_alloc);
		return cli_usage_error("clean", "%s", err.msg);
	}
	diag = cli_diag_init(&cd, "clean", quiet);
	if (cal) {
		if (wl_cal_doc_read(cal, &doc, &err) || wl_cal_get_outline(&doc, &outline, &err)) {
			rc = cli_fail("clean", &err);
			goto done;
		}
		p.n_outline = outline.n;
		memcpy(p.outline_m, outline.xy, sizeof p.outline_m);
	}
	if (wl_clean_raw_read(argv[optind], &raw, &err) || wl_clean_run(raw, &p, diag, &res, &err)) {
		rc = cli_fail("clean", &err);
		goto done;
	}
	wl_clean_source_init(&src, raw);
	src.cal_path = cal;
	src.cal_sha256 = cal ? doc.sha256_hex : NULL;
	src.tank_rect = have_tank;
	if (wl_clean_write(out, side, &p, &src, &res, &err)) {
		rc = cli_fail("clean", &err);
		goto done;
	}
	if (!quiet)
		for (size_t k = 0; k < res.nrobots; k++)
			summary(&res.robots[k]);
done:
	wl_cal_doc_release(&doc);
	wl_clean_result_release(&res);
	wl_clean_raw_destroy(raw);
	free(side_alloc);
	return cli_finish("clean", rc);
}
