/* cmd_track.c: `wakeline track CLIP --cal CAL.json -o RAW.csv`: robot poses per frame. */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "calib/calib.h"
#include "cli/cli.h"
#include "track/track.h"

const char cmd_track_summary[] = "track robots (AprilTags or colour caps) in a clip -> RAW.csv";

static const char usage[] =
        "usage: wakeline track CLIP --cal CAL.json -o RAW.csv [options]\n"
        "\n"
        "Finds each robot in every frame and writes its pose on the robot's marker\n"
        "plane in tank metres (RAW.csv, one row per frame per robot).\n"
        "\n"
        "  --cal CAL.json          calibration of this camera setting (required)\n"
        "  -o, --output RAW.csv    output table (required; written atomically)\n"
        "  --mode tag|colour       AprilTags (default) or coloured caps\n"
        "  --family NAME           tag family: tag36h11 (default), tag25h9, tag16h5,\n"
        "                          tagStandard41h12, tagCircle21h7\n"
        "  --ids 3,7               track only these tag ids (listed from the first frame)\n"
        "  --robots ROBOTS.csv     per robot: id,plane_height_m,heading_offset_rad,\n"
        "                          body_diameter_m,front_hsv_lo,front_hsv_hi,back_hsv_lo,\n"
        "                          back_hsv_hi (hsv as \"h,s,v\", hue 0-179)\n"
        "  --plane-height-m Z      marker plane height above the floor (default: CAL.json's)\n"
        "  --rescan-s S            full-frame search for new robots every S s (default 2)\n"
        "  --decimate F            AprilTag quad_decimate for full-frame searches (default 2)\n"
        "  --window-decimate F     quad_decimate inside windows (default: 2 for tags >= 32 px, else 1)\n"
        "  --quad-sigma S          blur before segmentation, px (default 0; 0.8 for noisy clips)\n"
        "  --sharpening F          AprilTag decode_sharpening (default 0.25)\n"
        "  --max-hamming N         corrected bits accepted: 0 (default) or 1\n"
        "  --min-margin M          minimum decision margin (default 20; 60 with 1 bit corrected)\n"
        "  --trail TRAIL.png       the first frame with each robot's path\n"
        "  --overlay QC.mp4        the clip with poses, ids, trails and tank outline\n"
        "  --threads N             decoder threads (default: all cores)\n"
        "  --watch-period-s S      look at the floor markers every S s of the clip (default 0.5)\n"
        "  --watch-threshold-px P  a marker shift above P px is a camera move (default 0.5)\n"
        "  --no-watch              do not watch the camera (no re-registration on a move)\n"
        "  -q, --quiet             no progress line\n"
        "  -h, --help              this text\n"
        "\n"
        "Exit status: 0 ok, 1 failure, 2 usage error.  See docs/track.md.\n";

enum {
	O_CAL = 256,
	O_MODE,
	O_FAMILY,
	O_IDS,
	O_ROBOTS,
	O_PLANE,
	O_RESCAN,
	O_DEC,
	O_WDEC,
	O_SIGMA,
	O_SHARP,
	O_HAM,
	O_MARGIN,
	O_TRAIL,
	O_OVERLAY,
	O_THREADS,
	O_WPERIOD,
	O_WTHRESH,
	O_NOWATCH
};

/* warnings from the library go to standard error, one line each */
static void diag_warn(void *ctx, const char *stage, const char *msg)
{
	(void)ctx;
	cli_warn(stage, "%s", msg);
}

typedef struct {
	cli_progress p;
} progress_ctx;

static void on_progress(void *vctx, int64_t frames, double t_s, double duration_s)
{
	progress_ctx *c = vctx;
	double el = cli_now_s() - c->p.t_start, fps = el > 0 ? frames / el : 0;
	double left = duration_s > t_s && t_s > 0 ? (duration_s - t_s) * el / t_s : 0;
	cli_progress_update(&c->p, "track: %lld frames, %.0f fps, %.0f s left", (long long)frames, fps, left);
}

static int parse_float_opt(const char *name, const char *arg, double lo, double hi, double *out)
{
	if (!cli_parse_double(arg, out) || *out < lo || *out > hi)
		return cli_usage_error("track", "%s '%s': give a number from %g to %g", name, arg, lo, hi);
	return 0;
}

int cmd_track(int argc, char **argv)
{
	static const struct option lo[] = {{"cal", required_argument, NULL, O_CAL},
	                                   {"output", required_argument, NULL, 'o'},
	                                   {"mode", required_argument, NULL, O_MODE},
	                                   {"family", required_argument, NULL, O_FAMILY},
	                                   {"ids", required_argument, NULL, O_IDS},
	                                   {"robots", required_argument, NULL, O_ROBOTS},
	                                   {"plane-height-m", required_argument, NULL, O_PLANE},
	                                   {"rescan-s", required_argument, NULL, O_RESCAN},
	                                   {"decimate", required_argument, NULL, O_DEC},
	                                   {"window-decimate", required_argument, NULL, O_WDEC},
	                                   {"quad-sigma", required_argument, NULL, O_SIGMA},
	                                   {"sharpening", required_argument, NULL, O_SHARP},
	                                   {"max-hamming", required_argument, NULL, O_HAM},
	                                   {"min-margin", required_argument, NULL, O_MARGIN},
	                                   {"trail", required_argument, NULL, O_TRAIL},
	                                   {"overlay", required_argument, NULL, O_OVERLAY},
	                                   {"threads", required_argument, NULL, O_THREADS},
	                                   {"watch-period-s", required_argument, NULL, O_WPERIOD},
	                                   {"watch-threshold-px", required_argument, NULL, O_WTHRESH},
	                                   {"no-watch", no_argument, NULL, O_NOWATCH},
	                                   {"quiet", no_argument, NULL, 'q'},
	                                   {"help", no_argument, NULL, 'h'},
	                                   {NULL, 0, NULL, 0}};
	wl_track_opts o;
	wl_track_run_opts ro;
	wl_watch_opts wo;
	wl_diag diag = {diag_warn, NULL, NULL};
	wl_track_summary sum;
	wl_calib cal;
	wl_err err;
	progress_ctx pc;
	const char *cal_path = NULL, *ids = NULL, *robots = NULL;
	int quiet = 0, c, rc, margin_set = 0;
	double d;
	wl_track_opts_init(&o);
	wl_watch_opts_init(&wo);
	memset(&ro, 0, sizeof ro);
	optind = 1;
	while ((c = getopt_long(argc, argv, "o:qh", lo, NULL)) != -1) {
		switch (c) {
		case O_CAL:
			cal_path = optarg;
			break;
		case 'o':
			ro.raw_path = optarg;
			break;
		case O_MODE:
			if (strcmp(optarg, "tag") == 0)
				o.mode = WL_TRACK_TAG;
			else if (strcmp(optarg, "colour") == 0 || strcmp(optarg, "color") == 0)
				o.mode = WL_TRACK_COLOUR;
			else
				return cli_usage_error("track", "--mode '%s': give tag or colour", optarg);
			break;
		case O_FAMILY:
			if (strlen(optarg) >= sizeof o.family)
				return cli_usage_error("track", "--family '%s': unknown family", optarg);
			snprintf(o.family, sizeof o.family, "%s", optarg);
			break;
		case O_IDS:
			ids = optarg;
			break;
		case O_ROBOTS:
			robots = optarg;
			break;
		case O_PLANE:
			if (parse_float_opt("--plane-height-m", optarg, -10, 10, &o.plane_height_m))
				return WL_EXIT_USAGE;
			break;
		case O_RESCAN:
			if (parse_float_opt("--rescan-s", optarg, 0, 1e6, &o.rescan_s))
				return WL_EXIT_USAGE;
			break;
		case O_DEC:
			if (parse_float_opt("--decimate", optarg, 1, 8, &d))
				return WL_EXIT_USAGE;
			o.quad_decimate = (float)d;
			break;
		case O_WDEC:
			if (parse_float_opt("--window-decimate", optarg, 1, 8, &d))
				return WL_EXIT_USAGE;
			o.window_decimate = (float)d;
			break;
		case O_SIGMA:
			if (parse_float_opt("--quad-sigma", optarg, 0, 10, &d))
				return WL_EXIT_USAGE;
			o.quad_sigma = (float)d;
			break;
		case O_SHARP:
			if (parse_float_opt("--sharpening", optarg, 0, 10, &o.decode_sharpening))
				return WL_EXIT_USAGE;
			break;
		case O_HAM:
			if (!cli_parse_int(optarg, &o.max_hamming) || o.max_hamming < 0 || o.max_hamming > 1)
				return cli_usage_error("track", "--max-hamming '%s': give 0 or 1", optarg);
			break;
		case O_MARGIN:
			if (parse_float_opt("--min-margin", optarg, 0, 1000, &o.min_margin))
				return WL_EXIT_USAGE;
			margin_set = 1;
			break;
		case O_TRAIL:
			ro.trail_png = optarg;
			break;
		case O_OVERLAY:
			ro.overlay_mp4 = optarg;
			break;
		case O_THREADS:
			if (!cli_parse_int(optarg, &ro.decode_threads) || ro.decode_threads < 0 ||
			    ro.decode_threads > 64)
				return cli_usage_error("track", "--threads '%s': give 0 (all cores) to 64",
				                       optarg);
			break;
		case O_WPERIOD:
			if (parse_float_opt("--watch-period-s", optarg, 0.01, 1e6, &wo.period_s))
				return WL_EXIT_USAGE;
			break;
		case O_WTHRESH:
			if (parse_float_opt("--watch-threshold-px", optarg, 0.01, 1000, &wo.threshold_px))
				return WL_EXIT_USAGE;
			break;
		case O_NOWATCH:
			wo.enabled = 0;
			break;
		case 'q':
			quiet = 1;
			break;
		case 'h':
			fputs(usage, stdout);
			return WL_EXIT_OK;
		default:
			return cli_usage_error("track", "unknown option");
		}
	}
	if (optind != argc - 1)
		return cli_usage_error("track", optind >= argc ? "give the CLIP to track" : "give one CLIP");
	if (!cal_path)
		return cli_usage_error("track", "give the calibration: --cal CAL.json");
	if (!ro.raw_path)
		return cli_usage_error("track", "give the output: -o RAW.csv");
	if (ids && robots)
		return cli_usage_error("track",
		                       "give --ids or --robots, not both (ROBOTS.csv lists the ids)");
	if (margin_set)
		o.min_margin_h1 = o.min_margin > o.min_margin_h1 ? o.min_margin : o.min_margin_h1;
	ro.clip = argv[optind];
	ro.queue_frames = 4;
	wl_err_clear(&err);
	if (ids && wl_track_parse_ids(ids, &o, &err) != WL_OK)
		return cli_usage_error("track", "%s", err.msg);
	if (robots && wl_track_load_robots(robots, &o, &err) != WL_OK)
		return cli_fail("track", &err);
	wl_calib_init(&cal);
	if (wl_calib_load(cal_path, &cal, &err) != WL_OK) {
		wl_calib_release(&cal);
		return cli_fail("track", &err);
	}
	if (!isnan(o.plane_height_m) && cal.cam.water_depth_m > 0 && o.plane_height_m < cal.cam.water_depth_m)
		cli_warn("track",
		         "plane %.3f m lies under the water surface (%.3f m): positions are refracted",
		         o.plane_height_m, cal.cam.water_depth_m);
	cli_progress_init(&pc.p, quiet);
	ro.progress = on_progress;
	ro.progress_ctx = &pc;
	snprintf(wo.family, sizeof wo.family, "%s", o.family);
	ro.watch = &wo;
	ro.diag = &diag;
	rc = wl_track_run(&ro, &o, &cal, cal_path, &sum, &err);
	cli_progress_done(&pc.p);
	wl_calib_release(&cal);
	if (rc != WL_OK)
		return cli_fail("track", &err);
	if (sum.warning[0])
		cli_warn("track", "%s", sum.warning);
	if (!quiet && wo.enabled && sum.camera_markers == 0)
		printf("%s: camera watch: the calibration names no floor markers (made from --points?): the "
		       "camera was not watched\n",
		       ro.raw_path);
	else if (!quiet && wo.enabled)
		printf("%s: camera watch: %d checks in %.3f CPU-s, %d move%s%s\n", ro.raw_path,
		       sum.camera_checks, sum.camera_watch_cpu_s, sum.camera_moves,
		       sum.camera_moves == 1 ? "" : "s",
		       isfinite(sum.suspect_from_t_s)
		               ? " (poses suspect from a move that could not be registered)"
		               : "");
	if (!quiet)
		printf("%s: %lld frames, %d robots, %lld of %lld rows ok (%.1f%%), %lld full-frame and %lld "
		       "window "
		       "searches\n",
		       ro.raw_path, (long long)sum.frames, sum.n_robots, (long long)sum.ok_rows,
		       (long long)sum.rows, sum.rows ? 100.0 * sum.ok_rows / sum.rows : 0.0,
		       (long long)sum.stats.full_scans, (long long)sum.stats.window_scans);
	return cli_finish("track", WL_EXIT_OK);
}
