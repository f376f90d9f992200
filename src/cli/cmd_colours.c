/* cmd_colours.c: `wakeline colours CLIP --at S --px U,V | --box X,Y,W,H`: HSV statistics to pick cap ranges.
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "decode/decode.h"
#include "track/track.h"

const char cmd_colours_summary[] = "HSV statistics of a spot in a frame, to pick colour-cap ranges";

static const char HEAD[] =
        "usage: wakeline colours CLIP --at SECONDS (--px U,V [--radius R] | --box X,Y,W,H) [--displayed]\n"
        "\n"
        "Prints the HSV statistics (OpenCV's 8-bit scale: hue 0-179, saturation and\n"
        "value 0-255) of a disc or a box in the frame at SECONDS, and a range to put\n"
        "in ROBOTS.csv (front_hsv_lo / front_hsv_hi ...).\n"
        "\n";
static const char TAIL[] = "\nExit status: 0 ok, 1 failure, 2 usage error.\n";

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

static int parse_px(const char *arg, void *dest, char *msg, size_t cap)
{
	if (parse_nums(arg, dest, 2))
		return 0;
	snprintf(msg, cap, "give U,V in pixels");
	return 1;
}

static int parse_box(const char *arg, void *dest, char *msg, size_t cap)
{
	double *b = dest;
	if (parse_nums(arg, b, 4) && b[2] >= 1 && b[3] >= 1)
		return 0;
	snprintf(msg, cap, "give X,Y,W,H with W, H >= 1");
	return 1;
}

static int clampi(int x, int lo, int hi)
{
	return x < lo ? lo : x > hi ? hi : x;
}

/* What to measure: a disc (px, radius) or a box, at a time. */
typedef struct {
	double at, px[2], box[4], radius;
	int have_px, have_box, displayed;
} spot;

/* The first frame whose time reaches `at` (less half a frame). */
static wl_status find_frame(wl_decoder *dec, const char *clip, double at, const wl_frame **out, wl_err *err)
{
	const wl_video_info *info = wl_decoder_info(dec);
	double half = info->fps_hint > 0 ? 0.5 / info->fps_hint : 0.01;
	const wl_frame *f = NULL, *g;
	wl_status st;
	while (!(st = wl_decoder_next(dec, &g, err)) && g) {
		f = g;
		if (g->t_s >= at - half)
			break;
	}
	if (st)
		return st;
	if (!f || f->t_s < at - 1.0)
		return wl_err_set(err, WL_EINVAL,
		                  "%s: the clip ends at %.3f s, before --at %.3f s: give an earlier time",
		                  clip, f ? f->t_s : 0.0, at);
	*out = f;
	return WL_OK;
}

/* Displayed pixels of the spot to coded ones. */
static void to_coded(spot *q, int rotation_deg, int w, int h)
{
	double a[2], b[2];
	if (q->have_px) {
		wl_orient_to_coded(rotation_deg, w, h, q->px[0], q->px[1], &q->px[0], &q->px[1]);
		return;
	}
	wl_orient_to_coded(rotation_deg, w, h, q->box[0], q->box[1], &a[0], &a[1]);
	wl_orient_to_coded(rotation_deg, w, h, q->box[0] + q->box[2] - 1, q->box[1] + q->box[3] - 1, &b[0],
	                   &b[1]);
	q->box[0] = fmin(a[0], b[0]);
	q->box[1] = fmin(a[1], b[1]);
	q->box[2] = fabs(a[0] - b[0]) + 1;
	q->box[3] = fabs(a[1] - b[1]) + 1;
}

/* The spot's bounding box in the frame, inclusive. */
static void spot_box(const spot *q, int fw, int fh, int r[4])
{
	if (q->have_px) {
		r[0] = (int)floor(q->px[0] - q->radius);
		r[1] = (int)floor(q->px[1] - q->radius);
		r[2] = (int)ceil(q->px[0] + q->radius);
		r[3] = (int)ceil(q->px[1] + q->radius);
	} else {
		r[0] = (int)lrint(q->box[0]);
		r[1] = (int)lrint(q->box[1]);
		r[2] = r[0] + (int)lrint(q->box[2]) - 1;
		r[3] = r[1] + (int)lrint(q->box[3]) - 1;
	}
	r[0] = clampi(r[0], 0, fw - 1);
	r[1] = clampi(r[1], 0, fh - 1);
	r[2] = clampi(r[2], 0, fw - 1);
	r[3] = clampi(r[3], 0, fh - 1);
}

static void print_stats(const wl_frame *f, const int r[4], const wl_hsv_stats *st)
{
	/* a suggestion: the 5-95 % band widened a little; hue wraps */
	int hlo = ((st->p5[0] - 5) % 180 + 180) % 180, hhi = (st->p95[0] + 5) % 180;
	int slo = clampi(st->p5[1] - 30, 40, 255), vlo = clampi(st->p5[2] - 40, 40, 255);
	printf("frame %lld at %.3f s, %ld pixels (coded x %d..%d, y %d..%d)\n", (long long)f->index, f->t_s,
	       st->n, r[0], r[2], r[1], r[3]);
	printf("channel,mean,p5,p50,p95\n");
	printf("hue,%.1f,%d,%d,%d\n", st->mean[0], st->p5[0], st->p50[0], st->p95[0]);
	printf("saturation,%.1f,%d,%d,%d\n", st->mean[1], st->p5[1], st->p50[1], st->p95[1]);
	printf("value,%.1f,%d,%d,%d\n", st->mean[2], st->p5[2], st->p50[2], st->p95[2]);
	printf("suggested range: hsv_lo \"%d,%d,%d\" hsv_hi \"%d,255,255\"%s\n", hlo, slo, vlo, hhi,
	       hlo > hhi ? " (hue wraps through 0)" : "");
}

static wl_status measure(const char *clip, spot *q, wl_err *err)
{
	wl_decoder *dec = NULL;
	const wl_frame *f = NULL;
	uint8_t *mask = NULL;
	wl_hsv_stats st;
	int r[4], w, h;
	wl_status s;
	if ((s = wl_decoder_open(clip, WL_DECODE_RGB, 0, &dec, err)) ||
	    (s = find_frame(dec, clip, q->at, &f, err)))
		goto out;
	if (q->displayed)
		to_coded(q, wl_decoder_info(dec)->rotation_deg, f->width_px, f->height_px);
	spot_box(q, f->width_px, f->height_px, r);
	w = r[2] - r[0] + 1;
	h = r[3] - r[1] + 1;
	if (q->have_px) {
		if (!(mask = calloc((size_t)w * h, 1))) {
			s = wl_err_set(err, WL_ENOMEM, "out of memory");
			goto out;
		}
		for (int y = 0; y < h; y++)
			for (int x = 0; x < w; x++)
				mask[(size_t)y * w + x] =
				        hypot(r[0] + x - q->px[0], r[1] + y - q->px[1]) <= q->radius;
	}
	wl_hsv_region_stats(f->rgb, f->rgb_stride, r[0], r[1], w, h, mask, &st);
	if (st.n == 0)
		s = wl_err_set(
		        err, WL_EINVAL,
		        "%s: no pixels in the region at %.3f s: check --px/--box against the %dx%d frame",
		        clip, f->t_s, f->width_px, f->height_px);
	else
		print_stats(f, r, &st);
out:
	free(mask);
	wl_decoder_destroy(dec);
	return s;
}

int cmd_colours(int argc, char **argv)
{
	spot q = {NAN, {0, 0}, {0, 0, 0, 0}, 5.0, 0, 0, 0};
	wl_err err;
	int rc, first;
	cli_opt tab[] = {
	        CLI_OPT_NUM("at", "SECONDS", "the frame shown at this time (decoded from the start)", &q.at,
	                    0, 1e9),
	        CLI_OPT_FN("px", "U,V", "centre of a disc, pixels (centre of the top-left pixel at 0,0)",
	                   q.px, parse_px),
	        CLI_OPT_NUM("radius", "R", "its radius in pixels (default 5)", &q.radius, 0.5, 1000),
	        CLI_OPT_FN("box", "X,Y,W,H", "a box instead: top-left pixel and size", q.box, parse_box),
	        CLI_OPT_FLAG("displayed", 0,
	                     "the pixels are displayed ones (clip turned by its rotation\nmetadata); "
	                     "default: coded "
	                     "pixels as stored",
	                     &q.displayed),
	        CLI_OPT_END};
	const cli_opt *tables[] = {tab, NULL};
	tab[1].seen = &q.have_px;
	tab[3].seen = &q.have_box;
	if ((rc = cli_parse("colours", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (first != argc - 1)
		return cli_usage_error("colours", "give one CLIP");
	if (isnan(q.at))
		return cli_usage_error("colours", "give the time: --at SECONDS");
	if (q.have_px == q.have_box)
		return cli_usage_error("colours", "give either --px U,V or --box X,Y,W,H");
	wl_err_clear(&err);
	if (measure(argv[first], &q, &err) != WL_OK)
		return cli_fail("colours", &err);
	return cli_finish("colours", WL_EXIT_OK);
}
