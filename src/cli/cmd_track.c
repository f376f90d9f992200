/* cmd_track.c: `wakeline track CLIP --cal CAL.json -o RAW.csv`: robot poses per frame. */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "calib/calib.h"
#include "cli/cli.h"
#include "cli/trackopts.h"
#include "track/track.h"

const char cmd_track_summary[] = "track robots (AprilTags or colour caps) in a clip -> RAW.csv";

static const char usage_head[] = "usage: wakeline track CLIP --cal CAL.json -o RAW.csv [options]\n"
                                 "\n"
                                 "Finds each robot in every frame and writes its pose on the robot's marker\n"
                                 "plane in tank metres (RAW.csv, one row per frame per robot).\n"
                                 "\n"
                                 "  --cal CAL.json          calibration of this camera setting (required)\n"
                                 "  -o, --output RAW.csv    output table (required; written atomically)\n";

static const char usage_tail[] =
        "  --trail TRAIL.png       the first frame with each robot's path\n"
        "  --overlay QC.mp4        the clip with poses, ids, trails and tank outline\n"
        "  --threads N             decoder threads (default: all cores)\n"
        "  -q, --quiet             no progress line\n"
        "  -h, --help              this text\n"
        "\n"
        "Exit status: 0 ok, 1 failure, 2 usage error.  See docs/track.md.\n";

enum { O_CAL = 256, O_TRAIL, O_OVERLAY, O_THREADS };

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

int cmd_track(int argc, char **argv)
{
	static const struct option own[] = {{"cal", required_argument, NULL, O_CAL},
	                                    {"output", required_argument, NULL, 'o'},
	                                    {"trail", required_argument, NULL, O_TRAIL},
	                                    {"overlay", required_argument, NULL, O_OVERLAY},
	                                    {"threads", required_argument, NULL, O_THREADS},
	                                    {"quiet", no_argument, NULL, 'q'},
	                                    {"help", no_argument, NULL, 'h'},
	                                    {NULL, 0, NULL, 0}};
	struct option lo[sizeof own / sizeof own[0] + 32];
	cli_track_extra tx;
	wl_track_opts o;
	wl_track_run_opts ro;
	wl_track_summary sum;
	wl_calib cal;
	wl_err err;
	progress_ctx pc;
	const char *cal_path = NULL;
	int quiet = 0, c, rc;
	wl_track_opts_init(&o);
	memset(&ro, 0, sizeof ro);
	memset(&tx, 0, sizeof tx);
	cli_track_merge(own, lo);
	optind = 1;
	while ((c = getopt_long(argc, argv, "o:qh", lo, NULL)) != -1) {
		if (c >= CLI_TRACK_OPT_BASE) {
			if ((rc = cli_track_option("track", c, optarg, &o, &tx)) != 0)
				return rc;
			continue;
		}
		switch (c) {
		case O_CAL:
			cal_path = optarg;
			break;
		case 'o':
			ro.raw_path = optarg;
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
		case 'q':
			quiet = 1;
			break;
		case 'h':
			fputs(usage_head, stdout);
			fputs(cli_track_usage, stdout);
			fputs(usage_tail, stdout);
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
	ro.clip = argv[optind];
	ro.queue_frames = 4;
	if ((rc = cli_track_finish("track", &o, &tx)) != 0)
		return rc;
	wl_err_clear(&err);
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
	rc = wl_track_run(&ro, &o, &cal, cal_path, &sum, &err);
	cli_progress_done(&pc.p);
	wl_calib_release(&cal);
	if (rc != WL_OK)
		return cli_fail("track", &err);
	if (sum.warning[0])
		cli_warn("track", "%s", sum.warning);
	if (!quiet)
		printf("%s: %lld frames, %d robots, %lld of %lld rows ok (%.1f%%), %lld full-frame and %lld "
		       "window "
		       "searches\n",
		       ro.raw_path, (long long)sum.frames, sum.n_robots, (long long)sum.ok_rows,
		       (long long)sum.rows, sum.rows ? 100.0 * sum.ok_rows / sum.rows : 0.0,
		       (long long)sum.stats.full_scans, (long long)sum.stats.window_scans);
	return cli_finish("track", WL_EXIT_OK);
}
