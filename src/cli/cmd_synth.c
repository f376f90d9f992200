/* cmd_synth.c: `wakeline synth`: renders a scene file into a test clip, its
 * truth table and the scene used (src/synth/synth.h, docs/synth.md). */
#include <stdio.h>
#include <string.h>

#include "cli/cli.h"
#include "synth/synth.h"

const char cmd_synth_summary[] = "render a synthetic test clip from a scene file";

static const char HEAD[] = "usage: wakeline synth SCENE.json -o CLIP.mp4 [--quiet]\n"
                           "       wakeline synth SCENE.json --image FRAME.png [--frame N]\n"
                           "\n"
                           "Renders the invented scene described in SCENE.json (tank, floor markers,\n"
                           "camera, robots and their paths; see docs/synth.md) and writes:\n"
                           "  CLIP.mp4          H.264 video with exact (also variable) frame times\n"
                           "  CLIP.truth.csv    t_s,frame,id,x_m,y_m,heading_rad,visible for every\n"
                           "                    frame and robot (marker centre, tank frame)\n"
                           "  CLIP.scene.json   every parameter used, defaults included, and the\n"
                           "                    camera model (K, distortion, R, t, position)\n"
                           "With --image, writes one frame as a PNG instead (for calibrating from a\n"
                           "still image).\n"
                           "\n";
static const char TAIL[] = "\nExit status: 0 ok, 1 failure, 2 usage error.\n";

typedef struct {
	cli_progress prog;
} progress_ctx;

static int on_progress(long done, long total, void *ctx)
{
	progress_ctx *p = ctx;
	double el = cli_now_s() - p->prog.t_start;
	cli_progress_update(&p->prog, "synth: frame %ld/%ld (%.1f frames/s)", done, total,
	                    el > 0 ? (double)done / el : 0.0);
	return 0;
}

int cmd_synth(int argc, char **argv)
{
	const char *out = NULL, *image = NULL;
	int quiet = 0, frame = 0, c, first;
	wl_synth_scene sc;
	wl_err err = {0};
	progress_ctx pc;
	const cli_opt tab[] = {
	        CLI_OPT_STR("output", 'o', "CLIP.mp4", "the clip to write", &out),
	        CLI_OPT_STR("image", 0, "FRAME.png", "write one frame as PNG", &image),
	        CLI_OPT_INT("frame", 0, "N", "the frame for --image (default 0)", &frame, 0, 2147483647),
	        CLI_OPT_FLAG("quiet", 'q', "no progress line", &quiet), CLI_OPT_END};
	const cli_opt *tables[] = {tab, NULL};
	if ((c = cli_parse("synth", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return c;
	if (first != argc - 1)
		return cli_usage_error("synth", "give exactly one scene file");
	if (!out && !image)
		return cli_usage_error("synth", "give -o CLIP.mp4 or --image FRAME.png");
	if (wl_synth_load(argv[first], &sc, &err))
		return cli_fail("synth", &err);
	if (image) {
		if (frame >= wl_synth_frame_count(&sc))
			return cli_usage_error("synth", "--frame %d is past the clip's %ld frames", frame,
			                       wl_synth_frame_count(&sc));
		if (wl_synth_write_png(&sc, frame, image, &err))
			return cli_fail("synth", &err);
	}
	if (out) {
		cli_progress_init(&pc.prog, quiet);
		if (wl_synth_write_clip(&sc, out, on_progress, &pc, &err)) {
			cli_progress_done(&pc.prog);
			return cli_fail("synth", &err);
		}
		cli_progress_done(&pc.prog);
		if (!quiet)
			fprintf(stderr, "synth: wrote '%s' (%ld frames, %.1f s)\n", out,
			        wl_synth_frame_count(&sc), cli_now_s() - pc.prog.t_start);
	}
	return cli_finish("synth", WL_EXIT_OK);
}
