/*
 * test_decode.c: unit tests of the decode module: the coded <-> displayed
 * orientation maps, image turning, the PNG writer (read back through
 * FFmpeg's PNG decoder), and the decoder's API on a small clip made with the
 * ffmpeg CLI.
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>

#include "decode/decode.h"
#include "decode/image.h"

/* ---- orientation -------------------------------------------------------- */

static void test_from_degrees(void **state)
{
	(void)state;
	assert_int_equal(wl_orient_from_degrees(0), 0);
	assert_int_equal(wl_orient_from_degrees(90), 90);
	assert_int_equal(wl_orient_from_degrees(-90), 270);
	assert_int_equal(wl_orient_from_degrees(180), 180);
	assert_int_equal(wl_orient_from_degrees(-180), 180);
	assert_int_equal(wl_orient_from_degrees(270), 270);
	assert_int_equal(wl_orient_from_degrees(360), 0);
	assert_int_equal(wl_orient_from_degrees(-270), 90);
	assert_int_equal(wl_orient_from_degrees(89.6), 90); /* matrices store rounded sines */
	assert_int_equal(wl_orient_from_degrees(-89.99), 270);
	assert_int_equal(wl_orient_from_degrees(44), 0);
	assert_int_equal(wl_orient_from_degrees(46), 90);
	assert_int_equal(wl_orient_from_degrees(450), 90);
	assert_int_equal(wl_orient_from_degrees(NAN), 0);
}

/*
 * Corners of a coded 4×3 image (pixel centres 0..3, 0..2) and where each
 * lands when the image is shown turned counter-clockwise: worked out by hand
 * on paper (turning a card a quarter to the left moves its top-right corner
 * to the top-left).
 */
static void check_corners(int rot, const double want[4][2], int wd_want, int hd_want)
{
	static const double coded[4][2] = {{0, 0}, {3, 0}, {3, 2}, {0, 2}}; /* TL TR BR BL */
	int wd, hd;
	wl_orient_displayed_size(rot, 4, 3, &wd, &hd);
	assert_int_equal(wd, wd_want);
	assert_int_equal(hd, hd_want);
	for (int i = 0; i < 4; i++) {
		double ud, vd, u, v;
		wl_orient_to_displayed(rot, 4, 3, coded[i][0], coded[i][1], &ud, &vd);
		assert_true(ud == want[i][0] && vd == want[i][1]);
		wl_orient_to_coded(rot, 4, 3, ud, vd, &u, &v);
		assert_true(u == coded[i][0] && v == coded[i][1]);
	}
}

static void test_corners(void **state)
{
	(void)state;
	/* displayed positions of coded TL, TR, BR, BL */
	static const double r0[4][2] = {{0, 0}, {3, 0}, {3, 2}, {0, 2}};
	static const double r90[4][2] = {{0, 3}, {0, 0}, {2, 0}, {2, 3}}; /* TR -> TL */
	static const double r180[4][2] = {{3, 2}, {0, 2}, {0, 0}, {3, 0}};
	static const double r270[4][2] = {{2, 0}, {2, 3}, {0, 3}, {0, 0}}; /* TL -> TR */
	check_corners(0, r0, 4, 3);
	check_corners(90, r90, 3, 4);
	check_corners(180, r180, 4, 3);
	check_corners(270, r270, 3, 4);
	check_corners(-90, r270, 3, 4);
}

/* Every displayed point lies inside the displayed image, and the maps are
 * mutual inverses: exactly on a grid of 1/64 px, to 1e-12 px at random points. */
static void test_round_trip(void **state)
{
	static const int rots[] = {0, 90, 180, 270};
	const int w = 1920, h = 1080;
	(void)state;
	srand(7);
	for (int r = 0; r < 4; r++) {
		int wd, hd;
		wl_orient_displayed_size(rots[r], w, h, &wd, &hd);
		for (int k = 0; k < 20000; k++) {
			double u = (rand() % ((w - 1) * 64)) / 64.0, v = (rand() % ((h - 1) * 64)) / 64.0;
			double ud, vd, u2, v2;
			wl_orient_to_displayed(rots[r], w, h, u, v, &ud, &vd);
			assert_true(ud >= 0 && ud <= wd - 1 && vd >= 0 && vd <= hd - 1);
			wl_orient_to_coded(rots[r], w, h, ud, vd, &u2, &v2);
			assert_true(u2 == u && v2 == v);
			u = (w - 1) * (rand() / (double)RAND_MAX);
			v = (h - 1) * (rand() / (double)RAND_MAX);
			wl_orient_to_displayed(rots[r], w, h, u, v, &ud, &vd);
			wl_orient_to_coded(rots[r], w, h, ud, vd, &u2, &v2);
			assert_true(fabs(u2 - u) < 1e-12 && fabs(v2 - v) < 1e-12);
			/* the other direction */
			wl_orient_to_coded(rots[r], w, h, u * (wd - 1) / (w - 1), v * (hd - 1) / (h - 1), &u2,
			                   &v2);
			wl_orient_to_displayed(rots[r], w, h, u2, v2, &ud, &vd);
			assert_true(fabs(ud - u * (wd - 1) / (w - 1)) < 1e-12 &&
			            fabs(vd - v * (hd - 1) / (h - 1)) < 1e-12);
		}
	}
}

/* Turning pixels agrees with the point map, pixel by pixel. */
static void test_image_orient(void **state)
{
	enum { W = 5, H = 3 };
	uint8_t src[H][W * 3], dst[W * H * 3];
	static const int rots[] = {0, 90, 180, 270};
	(void)state;
	for (int y = 0; y < H; y++)
		for (int x = 0; x < W * 3; x++)
			src[y][x] = (uint8_t)(y * 50 + x);
	for (int r = 0; r < 4; r++) {
		int wd, hd;
		wl_orient_displayed_size(rots[r], W, H, &wd, &hd);
		wl_image_orient(rots[r], &src[0][0], W, H, W * 3, 3, dst, wd * 3);
		for (int y = 0; y < H; y++)
			for (int x = 0; x < W; x++) {
				double ud, vd;
				wl_orient_to_displayed(rots[r], W, H, x, y, &ud, &vd);
				for (int c = 0; c < 3; c++)
					assert_int_equal(dst[((int)vd * wd + (int)ud) * 3 + c],
					                 src[y][x * 3 + c]);
			}
	}
	/* 90 CCW of a 5x3: the coded top-right pixel is the displayed top-left */
	wl_image_orient(90, &src[0][0], W, H, W * 3, 3, dst, H * 3);
	assert_int_equal(dst[0], src[0][(W - 1) * 3]);
}

/* ---- PNG writer: read back through FFmpeg's PNG decoder ------------------ */

static char tmpdir[256];

static void tmp_path(char *buf, size_t n, const char *name)
{
	snprintf(buf, n, "%s/%s", tmpdir, name);
}

static void test_png_round_trip(void **state)
{
	enum { W = 37, H = 21 }; /* odd sizes: strides are not multiples of 4 */
	uint8_t gray[H][W + 3], rgb[H][W * 3];
	char path[512];
	wl_decoder *dec = NULL;
	const wl_frame *f;
	wl_err err = {0};
	(void)state;
	for (int y = 0; y < H; y++) {
		for (int x = 0; x < W + 3; x++)
			gray[y][x] = (uint8_t)(x * 7 + y * 11);
		for (int x = 0; x < W * 3; x++)
			rgb[y][x] = (uint8_t)(x * 5 + y * 13 + 1);
	}
	tmp_path(path, sizeof path, "gray.png");
	assert_int_equal(wl_png_write(path, &gray[0][0], W, H, W + 3, 1, &err), WL_OK);
	assert_int_equal(wl_decoder_open(path, 0, 1, &dec, &err), WL_OK);
	assert_string_equal(wl_decoder_info(dec)->codec, "png");
	assert_int_equal(wl_decoder_next(dec, &f, &err), WL_OK);
	assert_non_null(f);
	assert_int_equal(f->width_px, W);
	assert_int_equal(f->height_px, H);
	for (int y = 0; y < H; y++)
		assert_memory_equal(f->luma + (size_t)y * (size_t)f->luma_stride, gray[y], W);
	wl_decoder_destroy(dec);

	tmp_path(path, sizeof path, "rgb.png");
	assert_int_equal(wl_png_write(path, &rgb[0][0], W, H, W * 3, 3, &err), WL_OK);
	assert_int_equal(wl_decoder_open(path, WL_DECODE_RGB, 1, &dec, &err), WL_OK);
	assert_int_equal(wl_decoder_next(dec, &f, &err), WL_OK);
	assert_non_null(f->rgb);
	for (int y = 0; y < H; y++)
		assert_memory_equal(f->rgb + (size_t)y * (size_t)f->rgb_stride, rgb[y], W * 3);
	wl_decoder_destroy(dec);

	/* bad arguments and an unwritable path */
	assert_int_equal(wl_png_write(path, &rgb[0][0], W, H, W * 3, 2, &err), WL_EINVAL);
	assert_int_equal(wl_png_write(path, &rgb[0][0], W, H, W, 3, &err), WL_EINVAL);
	assert_int_equal(wl_png_write("/nonexistent-dir/x.png", &rgb[0][0], W, H, W * 3, 3, &err), WL_EIO);
	assert_non_null(strstr(err.msg, "/nonexistent-dir/x.png"));
}

/* ---- the decoder on a clip --------------------------------------------- */

static char clip[512];

static int make_clip(void)
{
	char cmd[1024];
	tmp_path(clip, sizeof clip, "clip.mp4");
	/* 30 frames at 25 fps, key frames every 10, B-frames, first time 5 s */
	snprintf(cmd, sizeof cmd,
	         "ffmpeg -v error -nostdin -y -f lavfi -i testsrc2=size=160x120:rate=25 -frames:v 30 "
	         "-c:v libx264 -pix_fmt yuv420p -g 10 -bf 3 -output_ts_offset 5 '%s'",
	         clip);
	return system(cmd);
}

static void test_decoder_clip(void **state)
{
	wl_decoder *dec = NULL;
	const wl_frame *f;
	const wl_video_info *in;
	wl_err err = {0};
	int64_t n = 0;
	(void)state;
	assert_int_equal(make_clip(), 0);
	assert_int_equal(wl_decoder_open(clip, 0, 0, &dec, &err), WL_OK);
	in = wl_decoder_info(dec);
	assert_string_equal(in->codec, "h264");
	assert_string_equal(in->pix_fmt, "yuv420p");
	assert_int_equal(in->width_px, 160);
	assert_int_equal(in->height_px, 120);
	assert_int_equal(in->bit_depth, 8);
	assert_int_equal(in->rotation_deg, 0);
	assert_true(isnan(in->first_pts_s));
	for (;;) {
		assert_int_equal(wl_decoder_next(dec, &f, &err), WL_OK);
		if (!f)
			break;
		assert_int_equal(f->index, n);
		/* 25 fps: frame n at n * 40 ms from the first (the stream times are exact) */
		assert_true(fabs(f->t_s - 0.04 * (double)n) < 1e-9);
		assert_int_equal(f->corrupt, 0);
		assert_int_equal(f->time_guessed, 0);
		assert_true(f->luma_stride >= 160);
		assert_null(f->rgb);
		n++;
	}
	assert_int_equal(n, 30);
	assert_true(fabs(in->first_pts_s - 5.0) < 1e-9);
	assert_int_equal(wl_decoder_frames(dec), 30);
	assert_int_equal(wl_decoder_damage_count(dec), 0);
	/* after the end: still the end */
	assert_int_equal(wl_decoder_next(dec, &f, &err), WL_OK);
	assert_null(f);

	/* seek back to 0.5 s: lands on the key frame at 0.4 s, indices unknown */
	assert_int_equal(wl_decoder_seek(dec, 0.5, &err), WL_OK);
	assert_int_equal(wl_decoder_next(dec, &f, &err), WL_OK);
	assert_non_null(f);
	assert_true(fabs(f->t_s - 0.4) < 1e-9);
	assert_int_equal(f->index, -1);
	assert_int_equal(wl_decoder_next(dec, &f, &err), WL_OK);
	assert_true(fabs(f->t_s - 0.44) < 1e-9);
	/* and to the start */
	assert_int_equal(wl_decoder_seek(dec, 0, &err), WL_OK);
	assert_int_equal(wl_decoder_next(dec, &f, &err), WL_OK);
	assert_true(fabs(f->t_s) < 1e-9);
	assert_int_equal(wl_decoder_seek(dec, NAN, &err), WL_EINVAL);
	wl_decoder_destroy(dec);

	/* seeking first thing decodes the first frame for the time origin */
	assert_int_equal(wl_decoder_open(clip, WL_DECODE_RGB, 2, &dec, &err), WL_OK);
	assert_int_equal(wl_decoder_seek(dec, 0.85, &err), WL_OK);
	assert_int_equal(wl_decoder_next(dec, &f, &err), WL_OK);
	assert_true(fabs(f->t_s - 0.8) < 1e-9);
	assert_non_null(f->rgb);
	assert_true(f->rgb_stride >= 160 * 3);
	wl_decoder_destroy(dec);
	wl_decoder_destroy(NULL);
}

static void test_decoder_errors(void **state)
{
	wl_decoder *dec = (wl_decoder *)1;
	wl_err err = {0};
	char path[512];
	FILE *fp;
	(void)state;
	assert_int_equal(wl_decoder_open("/nonexistent/clip.mp4", 0, 0, &dec, &err), WL_EIO);
	assert_null(dec);
	assert_non_null(strstr(err.msg, "/nonexistent/clip.mp4"));
	tmp_path(path, sizeof path, "empty.mp4");
	fp = fopen(path, "w");
	assert_non_null(fp);
	fclose(fp);
	assert_int_equal(wl_decoder_open(path, 0, 0, &dec, &err), WL_EFORMAT);
	assert_non_null(strstr(err.msg, "empty"));
	tmp_path(path, sizeof path, "text.txt");
	fp = fopen(path, "w");
	assert_non_null(fp);
	fputs("t_s,x_m\n0,1\n", fp);
	fclose(fp);
	assert_int_equal(wl_decoder_open(path, 0, 0, &dec, &err), WL_EDECODE);
	assert_non_null(strstr(err.msg, "text.txt"));
}

/* A Y4M stream (plain-text header) of w x h with one 4:2:0 frame of
 * (w*h*3/2 bytes, gray); the frame data are only written when small. */
static void write_y4m(const char *path, int w, int h)
{
	FILE *fp = fopen(path, "wb");
	assert_non_null(fp);
	fprintf(fp, "YUV4MPEG2 W%d H%d F25:1 Ip A1:1 C420jpeg\nFRAME\n", w, h);
	if ((long long)w * h <= 4096)
		for (long long i = 0; i < (long long)w * h * 3 / 2; i++)
			fputc(128, fp);
	fclose(fp);
}

/* The frame-size bound (decode.h): refused at open with the size named;
 * a small clip of the same kind opens and decodes. */
static void test_decoder_size_bound(void **state)
{
	static const int bad[][2] = {{20000, 100}, {100, 20000}, {16000, 16000}};
	wl_decoder *dec = NULL;
	const wl_frame *f = NULL;
	wl_err err = {0};
	char path[512], want[64];
	(void)state;
	for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
		tmp_path(path, sizeof path, "big.y4m");
		write_y4m(path, bad[i][0], bad[i][1]);
		assert_int_equal(wl_decoder_open(path, 0, 1, &dec, &err), WL_EFORMAT);
		assert_null(dec);
		snprintf(want, sizeof want, "%dx%d pixels", bad[i][0], bad[i][1]);
		assert_non_null(strstr(err.msg, want));
		assert_non_null(strstr(err.msg, "big.y4m"));
	}
	tmp_path(path, sizeof path, "small.y4m");
	write_y4m(path, 64, 48);
	assert_int_equal(wl_decoder_open(path, 0, 1, &dec, &err), WL_OK);
	assert_int_equal(wl_decoder_next(dec, &f, &err), WL_OK);
	assert_non_null(f);
	assert_int_equal(f->width_px, 64);
	assert_int_equal(f->height_px, 48);
	wl_decoder_destroy(dec);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_from_degrees),   cmocka_unit_test(test_corners),
	        cmocka_unit_test(test_round_trip),     cmocka_unit_test(test_image_orient),
	        cmocka_unit_test(test_png_round_trip), cmocka_unit_test(test_decoder_clip),
	        cmocka_unit_test(test_decoder_errors), cmocka_unit_test(test_decoder_size_bound),
	};
	char cmd[300];
	int rc;
	snprintf(tmpdir, sizeof tmpdir, "/tmp/wl-test-decode-XXXXXX");
	if (!mkdtemp(tmpdir))
		return 1;
	rc = cmocka_run_group_tests(tests, NULL, NULL);
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmpdir);
	if (system(cmd) != 0)
		rc = 1;
	return rc;
}
