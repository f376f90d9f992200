/* cmd_synth.c: `wakeline synth`: renders a scene file into a test clip, its
 * truth table and the scene used (src/synth/synth.h, docs/synth.md). */
#include <getopt.h>
#include <stdio.h>
#include <string.h>

#include "cli/cli.h"
#include "synth/synth.h"

const char cmd_synth_summary[] = "render a synthetic test clip from a scene file";

static const char usage[] = "usage: wakeline synth SCENE.json -o CLIP.mp4 [--quiet]\n"
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
                            "\n"
                            "options:\n"
                            "  -o, --output CLIP.mp4   the clip to write\n"
                            "      --image FRAME.png   write one frame as PNG\n"
                            "      --frame N           the frame for --image (default 0)\n"
                            "  -q, --quiet             no progress line\n"
                            "  -h, --help              this text\n"
                            "\n"
                            "Exit status: 0 ok, 1 failure, 2 usage error.\n";

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
	static const struct option opts[] = {
	        {"output", required_argument, NULL, 'o'}, {"image", required_argument, NULL, 'i'},
	        {"frame", required_argument, NULL, 'f'},  {"quiet", no_argument, NULL, 'q'},
	        {"help", no_argument, NULL, 'h'},         {NULL, 0, NULL, 0}};
	const char *out = NULL, *image = NULL;
	int quiet = 0, frame = 0, c;
	wl_synth_scene sc;
	wl_err err = {0};
	progress_ctx pc;

	optind = 1;
	while ((c = getopt_long(argc, argv, "o:qh", opts, NULL)) != -1) {
		switch (c) {
		case 'o':
			out = optarg;
			break;
		case 'i':
			image = optarg;
			break;
		case 'f':
			if (!cli_parse_int(optarg, &frame) || frame < 0)
				return cli_usage_error("synth", "--frame '%s' is not a frame number", optarg);
			break;
		case 'q':
			quiet = 1;
			break;
		case 'h':
			fputs(usage, stdout);
			return cli_finish("synth", WL_EXIT_OK);
		default:
			return cli_usage_error("synth", "unknown option");
		}
	}
	if (optind != argc - 1)
		return cli_usage_error("synth", "give exactly one scene file");
	if (!out && !image)
		return cli_usage_error("synth", "give -o CLIP.mp4 or --image FRAME.png");
	if (wl_synth_load(argv[optind], &sc, &err))
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
