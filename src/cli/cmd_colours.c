/* cmd_colours.c: `wakeline colours CLIP --at S --px U,V | --box X,Y,W,H`: HSV statistics to pick cap ranges.
 */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "decode/decode.h"
#include "track/track.h"

const char cmd_colours_summary[] = "HSV statistics of a spot in a frame, to pick colour-cap ranges";

static const char usage[] =
        "usage: wakeline colours CLIP --at SECONDS (--px U,V [--radius R] | --box X,Y,W,H) [--displayed]\n"
        "\n"
        "Prints the HSV statistics (OpenCV's 8-bit scale: hue 0-179, saturation and\n"
        "value 0-255) of a disc or a box in the frame at SECONDS, and a range to put\n"
        "in ROBOTS.csv (front_hsv_lo / front_hsv_hi ...).\n"
        "\n"
        "  --at SECONDS     the frame shown at this time (decoded from the start)\n"
        "  --px U,V         centre of a disc, pixels (centre of the top-left pixel at 0,0)\n"
        "  --radius R       its radius in pixels (default 5)\n"
        "  --box X,Y,W,H    a box instead: top-left pixel and size\n"
        "  --displayed      the pixels are displayed ones (clip turned by its rotation\n"
        "                   metadata); default: coded pixels as stored\n"
        "  -h, --help       this text\n"
        "\n"
        "Exit status: 0 ok, 1 failure, 2 usage error.\n";

static int parse_nums(const char *s, double *v, int n)
{
	char buf[128], *save = NULL, *tok;
	int k = 0;
	if (strlen(s) >= sizeof buf)
		return 0;
	snprintf(buf, sizeof buf, "%s", s);
	for (tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save))
		if (k >= n || !cli_parse_double(tok, &v[k++]))
			return 0;
	return k == n;
}

static int clampi(int x, int lo, int hi)
{
	return x < lo ? lo : x > hi ? hi : x;
}

int cmd_colours(int argc, char **argv)
{
	enum { O_AT = 256, O_PX, O_RADIUS, O_BOX, O_DISP };
	static const struct option lo[] = {{"at", required_argument, NULL, O_AT},
	                                   {"px", required_argument, NULL, O_PX},
	                                   {"radius", required_argument, NULL, O_RADIUS},
	                                   {"box", required_argument, NULL, O_BOX},
	                                   {"displayed", no_argument, NULL, O_DISP},
	                                   {"help", no_argument, NULL, 'h'},
	                                   {NULL, 0, NULL, 0}};
	double at = NAN, px[2], box[4], radius = 5.0;
	int have_px = 0, have_box = 0, displayed = 0, c, rc = WL_EXIT_FAIL;
	wl_decoder *dec = NULL;
	const wl_frame *f = NULL;
	const wl_video_info *info;
	wl_err err;
	uint8_t *mask = NULL;
	wl_hsv_stats st;
	int x0, y0, x1, y1, w, h;
	optind = 1;
	while ((c = getopt_long(argc, argv, "h", lo, NULL)) != -1) {
		switch (c) {
		case O_AT:
			if (!cli_parse_double(optarg, &at) || at < 0)
				return cli_usage_error("colours", "--at '%s': give seconds >= 0", optarg);
			break;
		case O_PX:
			if (!parse_nums(optarg, px, 2))
				return cli_usage_error("colours", "--px '%s': give U,V in pixels", optarg);
			have_px = 1;
			break;
		case O_RADIUS:
			if (!cli_parse_double(optarg, &radius) || radius < 0.5 || radius > 1000)
				return cli_usage_error("colours", "--radius '%s': give 0.5 to 1000 pixels",
				                       optarg);
			break;
		case O_BOX:
			if (!parse_nums(optarg, box, 4) || box[2] < 1 || box[3] < 1)
				return cli_usage_error("colours", "--box '%s': give X,Y,W,H with W, H >= 1",
				                       optarg);
			have_box = 1;
			break;
		case O_DISP:
			displayed = 1;
			break;
		case 'h':
			fputs(usage, stdout);
			return WL_EXIT_OK;
		default:
			return cli_usage_error("colours", "unknown option");
		}
	}
	if (optind != argc - 1)
		return cli_usage_error("colours", "give one CLIP");
	if (isnan(at))
		return cli_usage_error("colours", "give the time: --at SECONDS");
	if (have_px == have_box)
		return cli_usage_error("colours", "give either --px U,V or --box X,Y,W,H");
	wl_err_clear(&err);
	if (wl_decoder_open(argv[optind], WL_DECODE_RGB, 0, &dec, &err) != WL_OK)
		return cli_fail("colours", &err);
	info = wl_decoder_info(dec);
	/* the first frame whose time reaches `at` (less half a frame) */
	for (;;) {
		const wl_frame *g;
		double half = info->fps_hint > 0 ? 0.5 / info->fps_hint : 0.01;
		if (wl_decoder_next(dec, &g, &err) != WL_OK)
			goto fail;
		if (!g)
			break;
		f = g;
		if (g->t_s >= at - half)
			break;
	}
	if (!f || f->t_s < at - 1.0) {
		wl_err_set(&err, WL_EINVAL,
		           "%s: the clip ends at %.3f s, before --at %.3f s: give an earlier time",
		           argv[optind], f ? f->t_s : 0.0, at);
		goto fail;
	}
	if (displayed) {
		if (have_px)
			wl_orient_to_coded(info->rotation_deg, f->width_px, f->height_px, px[0], px[1],
			                   &px[0], &px[1]);
		else {
			double a[2], b[2];
			wl_orient_to_coded(info->rotation_deg, f->width_px, f->height_px, box[0], box[1],
			                   &a[0], &a[1]);
			wl_orient_to_coded(info->rotation_deg, f->width_px, f->height_px, box[0] + box[2] - 1,
			                   box[1] + box[3] - 1, &b[0], &b[1]);
			box[0] = fmin(a[0], b[0]);
			box[1] = fmin(a[1], b[1]);
			box[2] = fabs(a[0] - b[0]) + 1;
			box[3] = fabs(a[1] - b[1]) + 1;
		}
	}
	if (have_px) {
		x0 = (int)floor(px[0] - radius);
		y0 = (int)floor(px[1] - radius);
		x1 = (int)ceil(px[0] + radius);
		y1 = (int)ceil(px[1] + radius);
	} else {
		x0 = (int)lrint(box[0]);
		y0 = (int)lrint(box[1]);
		x1 = x0 + (int)lrint(box[2]) - 1;
		y1 = y0 + (int)lrint(box[3]) - 1;
	}
	x0 = clampi(x0, 0, f->width_px - 1);
	y0 = clampi(y0, 0, f->height_px - 1);
	x1 = clampi(x1, 0, f->width_px - 1);
	y1 = clampi(y1, 0, f->height_px - 1);
	w = x1 - x0 + 1;
	h = y1 - y0 + 1;
	if (have_px) {
		if (!(mask = calloc((size_t)w * h, 1))) {
			wl_err_set(&err, WL_ENOMEM, "out of memory");
			goto fail;
		}
		for (int y = 0; y < h; y++)
			for (int x = 0; x < w; x++)
				mask[(size_t)y * w + x] = hypot(x0 + x - px[0], y0 + y - px[1]) <= radius;
	}
	wl_hsv_region_stats(f->rgb, f->rgb_stride, x0, y0, w, h, mask, &st);
	if (st.n == 0) {
		wl_err_set(&err, WL_EINVAL,
		           "%s: no pixels in the region at %.3f s: check --px/--box against the %dx%d frame",
		           argv[optind], f->t_s, f->width_px, f->height_px);
		goto fail;
	}
	printf("frame %lld at %.3f s, %ld pixels (coded x %d..%d, y %d..%d)\n", (long long)f->index, f->t_s,
	       st.n, x0, x1, y0, y1);
	printf("channel,mean,p5,p50,p95\n");
	printf("hue,%.1f,%d,%d,%d\n", st.mean[0], st.p5[0], st.p50[0], st.p95[0]);
	printf("saturation,%.1f,%d,%d,%d\n", st.mean[1], st.p5[1], st.p50[1], st.p95[1]);
	printf("value,%.1f,%d,%d,%d\n", st.mean[2], st.p5[2], st.p50[2], st.p95[2]);
	{
		/* a suggestion: the 5-95 % band widened a little; hue wraps */
		int hlo = ((st.p5[0] - 5) % 180 + 180) % 180, hhi = (st.p95[0] + 5) % 180;
		int slo = clampi(st.p5[1] - 30, 40, 255), vlo = clampi(st.p5[2] - 40, 40, 255);
		printf("suggested range: hsv_lo \"%d,%d,%d\" hsv_hi \"%d,255,255\"%s\n", hlo, slo, vlo, hhi,
		       hlo > hhi ? " (hue wraps through 0)" : "");
	}
	rc = WL_EXIT_OK;
	goto out;
fail:
	rc = cli_fail("colours", &err);
out:
	free(mask);
	wl_decoder_destroy(dec);
	return rc == WL_EXIT_OK ? cli_finish("colours", rc) : rc;
}
