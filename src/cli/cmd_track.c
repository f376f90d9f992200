/* cmd_track.c: `wakeline track CLIP --cal CAL.json -o RAW.csv`: robot poses per frame. */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "calib/calib.h"
#include "cli/cli.h"
#include "cli/print.h"
#include "cli/stageopts.h"
#include "track/track.h"

const char cmd_track_summary[] = "track robots (AprilTags or colour caps) in a clip -> RAW.csv";

static const char HEAD[] = "usage: wakeline track CLIP --cal CAL.json -o RAW.csv [options]\n"
                           "\n"
                           "Finds each robot in every frame and writes its pose on the robot's marker\n"
                           "plane in tank metres (RAW.csv, one row per frame per robot).\n"
                           "\n";
static const char TAIL[] = "\nExit status: 0 ok, 1 failure, 2 usage error.  See docs/track.md.\n";

int cmd_track(int argc, char **argv)
{
	cli_stages s;
	wl_track_run_opts ro;
	wl_track_summary sum;
	wl_calib cal;
	wl_err err;
	cli_diag cd;
	const char *cal_path = NULL;
	int quiet = 0, rc, first;
	const cli_opt own[] = {
	        CLI_OPT_STR("cal", 0, "CAL.json", "calibration of this camera setting (required)", &cal_path),
	        CLI_OPT_STR("output", 'o', "RAW.csv", "output table (required; written atomically)",
	                    &ro.raw_path),
	        CLI_OPT_STR("trail", 0, "TRAIL.png", "the first frame with each robot's path", &ro.trail_png),
	        CLI_OPT_STR("overlay", 0, "QC.mp4", "the clip with poses, ids, trails and tank outline",
	                    &ro.overlay_mp4),
	        CLI_OPT_FLAG("quiet", 'q', "no progress line or summary", &quiet),
	        CLI_OPT_END};
	const cli_opt *tables[] = {own, s.track, NULL};
	memset(&ro, 0, sizeof ro);
	cli_stages_init(&s);
	if ((rc = cli_parse("track", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (first != argc - 1)
		return cli_usage_error("track", first >= argc ? "give the CLIP to track" : "give one CLIP");
	if (!cal_path)
		return cli_usage_error("track", "give the calibration: --cal CAL.json");
	if (!ro.raw_path)
		return cli_usage_error("track", "give the output: -o RAW.csv");
	if ((rc = cli_stages_finish("track", &s)) != CLI_CONTINUE)
		return rc;
	ro.clip = argv[first];
	ro.queue_frames = 4;
	ro.decode_threads = s.p.decode_threads;
	wl_err_clear(&err);
	wl_calib_init(&cal);
	if (wl_calib_load(cal_path, &cal, &err) != WL_OK) {
		wl_calib_release(&cal);
		return cli_fail("track", &err);
	}
	ro.diag = cli_diag_init(&cd, "track", quiet);
	if (!isnan(s.p.track.plane_height_m) && cal.cam.water_depth_m > 0 &&
	    s.p.track.plane_height_m < cal.cam.water_depth_m)
		wl_diag_warn(ro.diag, "track",
		             "plane %.3f m lies under the water surface (%.3f m): positions are refracted",
		             s.p.track.plane_height_m, cal.cam.water_depth_m);
	rc = wl_track_run(&ro, &s.p.track, &cal, cal_path, &sum, &err);
	cli_diag_done(&cd);
	wl_calib_release(&cal);
	if (rc != WL_OK)
		return cli_fail("track", &err);
	if (!quiet)
		cli_print_track(ro.raw_path, &sum);
	return cli_finish("track", WL_EXIT_OK);
}
