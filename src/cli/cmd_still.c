/*
 * cmd_still.c: `wakeline still CLIP --at SECONDS -o FRAME.png`: the frame
 * nearest a time, written as PNG in its displayed orientation.  Seeks to the
 * key frame before the time and decodes forward.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "core/csvio.h"
#include "decode/decode.h"
#include "decode/image.h"

const char cmd_still_summary[] = "write the frame nearest a time as PNG";

static const char HEAD[] = "usage: wakeline still [options] CLIP --at SECONDS -o FRAME.png\n"
                           "\n"
                           "Writes the frame of CLIP whose time is nearest SECONDS (seconds since the\n"
                           "first frame, as `wakeline probe` counts them; a tie goes to the earlier\n"
                           "frame) as an 8-bit PNG, turned as the clip is meant to be shown (its\n"
                           "rotation metadata applied).  A time past the last frame gives the last\n"
                           "frame, with a warning.\n"
                           "\n";
static const char TAIL[] = "\nPrints one line: the file written, the frame's time and its size.\n"
                           "exit status: 0 ok, 1 failure, 2 usage error.\n";

typedef struct {
	uint8_t *px;
	int w, h, stride, ch;
	double t_s;
	int corrupt;
	int have;
	int at_end; /* the clip ended before a frame later than the time */
} still;

static wl_status keep(still *s, const wl_frame *f, int luma, wl_err *err)
{
	const uint8_t *src = luma ? f->luma : f->rgb;
	int stride = luma ? f->luma_stride : f->rgb_stride;
	int ch = luma ? 1 : 3;
	size_t need = (size_t)f->width_px * (size_t)ch * (size_t)f->height_px;

	if (!s->have || (size_t)s->w * (size_t)s->ch * (size_t)s->h < need) {
		uint8_t *p = realloc(s->px, need);
		if (!p)
			return wl_err_set(err, WL_ENOMEM, "out of memory keeping a %dx%d frame", f->width_px,
			                  f->height_px);
		s->px = p;
	}
	s->w = f->width_px;
	s->h = f->height_px;
	s->ch = ch;
	s->stride = f->width_px * ch;
	for (int y = 0; y < s->h; y++)
		memcpy(s->px + (size_t)y * (size_t)s->stride, src + (size_t)y * (size_t)stride,
		       (size_t)s->stride);
	s->t_s = f->t_s;
	s->corrupt = f->corrupt;
	s->have = 1;
	return WL_OK;
}

/* Decodes forward from the decoder's position to the frame nearest at_s.
 * *overshot is set when the first frame is already later than at_s (the
 * seek landed too late). */
static wl_status find(wl_decoder *dec, double at_s, int luma, still *s, int *overshot, wl_err *err)
{
	const wl_frame *f;
	wl_status st;
	int first = 1;

	s->have = 0;
	s->at_end = 0;
	*overshot = 0;
	for (;;) {
		st = wl_decoder_next(dec, &f, err);
		if (st != WL_OK || !f) {
			s->at_end = 1;
			return st;
		}
		if (f->t_s <= at_s) {
			st = keep(s, f, luma, err);
			if (st != WL_OK)
				return st;
			first = 0;
			continue;
		}
		if (first && f->t_s > 0)
			*overshot = 1;
		if (!s->have || f->t_s - at_s < at_s - s->t_s)
			return keep(s, f, luma, err);
		return WL_OK;
	}
}

static wl_status write_still(const still *s, int rot, const char *out_png, wl_err *err)
{
	int wd, hd;
	uint8_t *turned;
	wl_status st;

	if (rot == 0)
		return wl_png_write(out_png, s->px, s->w, s->h, s->stride, s->ch, err);
	wl_orient_displayed_size(rot, s->w, s->h, &wd, &hd);
	turned = malloc((size_t)wd * (size_t)hd * (size_t)s->ch);
	if (!turned)
		return wl_err_set(err, WL_ENOMEM, "%s: out of memory", out_png);
	wl_image_orient(rot, s->px, s->w, s->h, s->stride, s->ch, turned, wd * s->ch);
	st = wl_png_write(out_png, turned, wd, hd, wd * s->ch, s->ch, err);
	free(turned);
	return st;
}

static wl_status run(const char *clip, double at_s, const char *out_png, int coded, int luma, int threads,
                     wl_err *err)
{
	wl_decoder *dec = NULL;
	still s = {0};
	wl_status st;
	int overshot = 0, rot, wd, hd;
	char b1[WL_NUMBUF], b2[WL_NUMBUF];

	unsigned flags = luma ? 0 : WL_DECODE_RGB;
	int seekable = 1;

	st = wl_decoder_open(clip, flags, threads, &dec, err);
	if (st == WL_OK && wl_decoder_seek(dec, at_s, err) != WL_OK) {
		/* No timestamps or no index (a raw stream): decode from the start. */
		wl_decoder_destroy(dec);
		dec = NULL;
		seekable = 0;
		st = wl_decoder_open(clip, flags, threads, &dec, err);
	}
	if (st == WL_OK)
		st = find(dec, at_s, luma, &s, &overshot, err);
	/* The container put us after the time: seek further back (1 s, 4 s,
	 * 16 s ... before it), in the end to the start. */
	for (double back = 1.0; st == WL_OK && seekable && (overshot || !s.have); back *= 4) {
		double t = at_s - back > 0 ? at_s - back : 0;
		st = wl_decoder_seek(dec, t, err);
		if (st == WL_OK)
			st = find(dec, at_s, luma, &s, &overshot, err);
		if (t == 0)
			break;
	}
	if (st == WL_OK && !s.have)
		st = wl_err_set(err, WL_EDECODE, "%s: no frame decoded near %s s: the clip may be damaged",
		                clip, wl_fmt_fixed(b1, at_s, 6));
	if (st != WL_OK)
		goto out;
	rot = coded ? 0 : wl_decoder_info(dec)->rotation_deg;
	st = write_still(&s, rot, out_png, err);
	if (st != WL_OK)
		goto out;
	wl_orient_displayed_size(rot, s.w, s.h, &wd, &hd);
	printf("%s: frame at t_s %s (asked %s), %dx%d px %s%s, rotation %d applied\n", out_png,
	       wl_fmt_fixed(b1, s.t_s, 6), wl_fmt_fixed(b2, at_s, 6), wd, hd, luma ? "luma" : "RGB",
	       coded ? " coded" : "", rot);
	if (s.at_end && at_s > s.t_s)
		cli_warn("still", "%s s is past the last frame (at %s s): wrote the last frame", b2, b1);
	if (s.corrupt)
		cli_warn("still", "the frame at %s s was decoded with errors: it may show smears", b1);
out:
	free(s.px);
	wl_decoder_destroy(dec);
	return st;
}

int cmd_still(int argc, char **argv)
{
	const char *out_png = NULL;
	double at_s = NAN;
	int coded = 0, luma = 0, threads = 0, rc, first;
	wl_err err = {0};
	const cli_opt tab[] = {
	        CLI_OPT_NUM("at", "SECONDS", "the time wanted (>= 0)", &at_s, 0, 1e12),
	        CLI_OPT_STR("output", 'o', "F", "the PNG to write", &out_png),
	        CLI_OPT_FLAG("coded", 0,
	                     "keep the coded orientation (no rotation), as later stages see pixels", &coded),
	        CLI_OPT_FLAG("luma", 0, "write the 8-bit luma plane (gray) the tracker uses, instead of RGB",
	                     &luma),
	        CLI_OPT_INT("threads", 0, "N", "decoding threads (default 0: every core)", &threads, 0, 1024),
	        CLI_OPT_END};
	const cli_opt *tables[] = {tab, NULL};
	if ((rc = cli_parse("still", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (argc - first != 1)
		return cli_usage_error("still", "wants exactly one CLIP");
	if (isnan(at_s))
		return cli_usage_error("still", "--at SECONDS is required");
	if (!out_png)
		return cli_usage_error("still", "-o FRAME.png is required");
	if (run(argv[first], at_s, out_png, coded, luma, threads, &err) != WL_OK)
		return cli_fail("still", &err);
	return WL_EXIT_OK;
}
