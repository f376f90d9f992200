/*
 * test_track.c: the tracker's back ends on images drawn in memory: the
 * AprilTag boundary (pixel-centre convention, corner order, windows), HSV
 * against OpenCV, blob centroids, options and RAW.csv.
 */
#define _POSIX_C_SOURCE 200809L
#include <locale.h>
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

#include "core/afile.h"
#include "track/track.h"

#define PI 3.14159265358979323846

/* ---- drawing ---- */

/* Draws tag `id` of tag36h11 into an 8-bit image: centre (cu, cv) in our
 * pixel convention (centre of pixel 0 at 0), black-border side `side_px`,
 * turned by theta (image axes, v down), 4x4 supersampled. */
static void draw_tag(uint8_t *img, int w, int h, int stride, int id, double cu, double cv, double side_px,
		     double theta)
{
	unsigned char cells[256];
	int tw = wl_tagdet_render_cells("tag36h11", id, cells, sizeof cells);
	double cell = side_px / 8.0, c = cos(theta), s = sin(theta);
	assert_int_equal(tw, 10);
	for (int y = 0; y < h; y++)
		for (int x = 0; x < w; x++) {
			int acc = 0, n = 0;
			if (fabs(x - cu) > side_px || fabs(y - cv) > side_px)
				continue;
			for (int j = 0; j < 4; j++)
				for (int i = 0; i < 4; i++) {
					double px = x - 0.5 + (i + 0.5) / 4.0 - cu, py = y - 0.5 + (j + 0.5) / 4.0 - cv;
					double tx = c * px + s * py, ty = -s * px + c * py;
					double col = tx / cell + tw / 2.0, row = ty / cell + tw / 2.0;
					int v = 1;
					if (col >= 0 && col < tw && row >= 0 && row < tw)
						v = cells[(int)row * tw + (int)col];
					acc += v ? 220 : 30;
					n++;
				}
			img[(size_t)y * stride + x] = (uint8_t)(acc / n);
		}
}

static uint8_t *grey_image(int h, int stride)
{
	uint8_t *img = malloc((size_t)stride * h);
	assert_non_null(img);
	memset(img, 200, (size_t)stride * h);
	return img;
}

/* ---- AprilTag boundary ---- */

static void test_tag_centre_convention(void **state)
{
	int w = 240, h = 200, stride = 256;
	uint8_t *img = grey_image(h, stride);
	wl_tagdet *d = NULL;
	wl_tagdet_hit hits[4];
	int n;
	(void)state;
	/* the centre exactly on pixel (100, 80) in our convention */
	draw_tag(img, w, h, stride, 7, 100.0, 80.0, 48.0, 0.0);
	assert_int_equal(wl_tagdet_create("tag36h11", 1, &d, NULL), WL_OK);
	wl_tagdet_set(d, 1.0f, 0.0f, 0.25);
	n = wl_tagdet_detect(d, img, stride, 0, 0, w, h, hits, 4);
	assert_int_equal(n, 1);
	assert_int_equal(hits[0].id, 7);
	assert_int_equal(hits[0].hamming, 0);
	/* AprilTag's own centre would be at (100.5, 80.5); ours must be at
	 * (100, 80): an error of 0.5 px would fail this 0.1 px bound */
	assert_true(fabs(hits[0].c[0] - 100.0) < 0.1);
	assert_true(fabs(hits[0].c[1] - 80.0) < 0.1);
	/* corner order: p0 bottom-left, p1 bottom-right, p2 top-right, p3 top-left
	 * (tag coords (-1,1),(1,1),(1,-1),(-1,-1) with the tag's y down) */
	assert_true(fabs(hits[0].p[0][0] - 76.0) < 0.3 && fabs(hits[0].p[0][1] - 104.0) < 0.3);
	assert_true(fabs(hits[0].p[1][0] - 124.0) < 0.3 && fabs(hits[0].p[1][1] - 104.0) < 0.3);
	assert_true(fabs(hits[0].p[2][0] - 124.0) < 0.3 && fabs(hits[0].p[2][1] - 56.0) < 0.3);
	assert_true(fabs(hits[0].p[3][0] - 76.0) < 0.3 && fabs(hits[0].p[3][1] - 56.0) < 0.3);
	wl_tagdet_destroy(d);
	free(img);
}

static void test_tag_window_and_rotation(void **state)
{
	int w = 320, h = 240, stride = 336;
	uint8_t *img = grey_image(h, stride);
	wl_tagdet *d = NULL;
	wl_tagdet_hit full[4], win[4];
	double theta = 0.7, cu = 201.3, cv = 117.8;
	int n;
	(void)state;
	draw_tag(img, w, h, stride, 3, cu, cv, 40.0, theta);
	draw_tag(img, w, h, stride, 12, 60.0, 60.0, 30.0, -2.0);
	assert_int_equal(wl_tagdet_create("tag36h11", 1, &d, NULL), WL_OK);
	wl_tagdet_set(d, 1.0f, 0.0f, 0.25);
	n = wl_tagdet_detect(d, img, stride, 0, 0, w, h, full, 4);
	assert_int_equal(n, 2);
	/* a window holding only tag 3: same coordinates, through a view with
	 * the frame's stride (no copy) */
	n = wl_tagdet_detect(d, img, stride, 150, 70, 110, 100, win, 4);
	assert_int_equal(n, 1);
	assert_int_equal(win[0].id, 3);
	for (int i = 0; i < 2; i++) {
		const wl_tagdet_hit *f = full[0].id == 3 ? &full[0] : &full[1];
		double ax, ay;
		assert_true(fabs(f->c[0] - win[0].c[0]) < 0.02 && fabs(f->c[1] - win[0].c[1]) < 0.02);
		assert_true(fabs(win[0].c[0] - cu) < 0.1 && fabs(win[0].c[1] - cv) < 0.1);
		/* the tag's x axis: midpoint of p0,p3 -> midpoint of p1,p2 */
		ax = win[0].p[1][0] + win[0].p[2][0] - win[0].p[0][0] - win[0].p[3][0];
		ay = win[0].p[1][1] + win[0].p[2][1] - win[0].p[0][1] - win[0].p[3][1];
		assert_true(fabs(atan2(ay, ax) - theta) < 0.01);
	}
	/* a window cutting the tag finds nothing (never a partial tag) */
	n = wl_tagdet_detect(d, img, stride, 200, 70, 60, 100, win, 4);
	assert_int_equal(n, 0);
	wl_tagdet_destroy(d);
	free(img);
}

static void test_tag_small_sizes(void **state)
{
	/* the smallest black-border side that decodes at decimate 1 and 2, with
	 * a blur like a phone's (box 3x3); printed for docs/track.md */
	int w = 160, h = 160, stride = 160;
	wl_tagdet *d = NULL;
	int min_ok[2] = {0, 0};
	(void)state;
	assert_int_equal(wl_tagdet_create("tag36h11", 1, &d, NULL), WL_OK);
	for (int k = 0; k < 2; k++) {
		for (int side = 40; side >= 6; side -= 1) {
			uint8_t *img = grey_image(h, stride), *b = grey_image(h, stride);
			wl_tagdet_hit hits[4];
			int n, good = 0;
			draw_tag(img, w, h, stride, 5, 80.3, 79.6, side, 0.4);
			for (int y = 1; y < h - 1; y++)
				for (int x = 1; x < w - 1; x++) {
					int s = 0;
					for (int j = -1; j <= 1; j++)
						for (int i = -1; i <= 1; i++)
							s += img[(y + j) * stride + x + i];
					b[y * stride + x] = (uint8_t)(s / 9);
				}
			wl_tagdet_set(d, k == 0 ? 1.0f : 2.0f, 0.0f, 0.25);
			n = wl_tagdet_detect(d, b, stride, 0, 0, w, h, hits, 4);
			good = n == 1 && hits[0].id == 5 && hits[0].hamming == 0;
			free(img);
			free(b);
			if (!good)
				break;
			min_ok[k] = side;
		}
	}
	printf("# smallest tag36h11 side decoded (3x3 blur): %d px at decimate 1, %d px at decimate 2\n",
	       min_ok[0], min_ok[1]);
	assert_true(min_ok[0] > 0 && min_ok[0] <= 20);
	assert_true(min_ok[1] >= min_ok[0]);
	wl_tagdet_destroy(d);
}

static void test_tag_families(void **state)
{
	wl_tagdet *d = NULL;
	wl_err e;
	unsigned char cells[256];
	(void)state;
	assert_int_equal(wl_tagdet_create("tag99x1", 1, &d, &e), WL_EINVAL);
	assert_null(d);
	assert_non_null(strstr(e.msg, "tag99x1"));
	assert_int_equal(wl_tagdet_create("tag25h9", 0, &d, NULL), WL_OK);
	wl_tagdet_destroy(d);
	wl_tagdet_destroy(NULL);
	assert_int_equal(wl_tagdet_render_cells("tag36h11", 587, cells, sizeof cells), 0); /* 587 codes: 0..586 */
	assert_int_equal(wl_tagdet_render_cells("tag36h11", 586, cells, sizeof cells), 10);
}

/* ---- colour ---- */

static void test_hsv_matches_opencv(void **state)
{
	/* reference: python3-opencv 4.6, cv2.cvtColor(px, cv2.COLOR_RGB2HSV) on these uint8 pixels */
	static const int rgb[][3] = {{255, 0, 0},   {0, 255, 0},   {0, 0, 255},    {255, 255, 0},
				     {200, 30, 40}, {250, 10, 200}, {10, 20, 30},   {128, 128, 128},
				     {255, 128, 0}, {30, 200, 180}, {0, 0, 0},      {90, 60, 200}};
	static const int hsv[][3] = {{0, 255, 255},   {60, 255, 255},  {120, 255, 255}, {30, 255, 255},
				     {178, 217, 200}, {156, 245, 250}, {105, 170, 30},  {0, 0, 128},
				     {15, 255, 255},  {86, 217, 200},  {0, 0, 0},       {126, 178, 200}};
	(void)state;
	for (size_t i = 0; i < sizeof rgb / sizeof rgb[0]; i++) {
		int h, s, v;
		wl_rgb_to_hsv(rgb[i][0], rgb[i][1], rgb[i][2], &h, &s, &v);
		assert_int_equal(h, hsv[i][0]);
		assert_int_equal(s, hsv[i][1]);
		assert_int_equal(v, hsv[i][2]);
	}
}

static void test_hsv_wrap(void **state)
{
	wl_hsv_range red = {1, {170, 100, 80}, {8, 255, 255}};
	(void)state;
	assert_true(wl_hsv_in(&red, 178, 200, 200));
	assert_true(wl_hsv_in(&red, 3, 200, 200));
	assert_false(wl_hsv_in(&red, 20, 200, 200));
	assert_false(wl_hsv_in(&red, 178, 50, 200)); /* glare: low saturation */
	assert_false(wl_hsv_in(&red, 178, 200, 40));
}

/* draws an anti-aliased disk of colour col over an RGB image */
static void draw_disk(uint8_t *rgb, int w, int h, double cu, double cv, double r, const uint8_t col[3])
{
	for (int y = 0; y < h; y++)
		for (int x = 0; x < w; x++) {
			int in = 0;
			for (int j = 0; j < 4; j++)
				for (int i = 0; i < 4; i++) {
					double px = x - 0.5 + (i + 0.5) / 4.0, py = y - 0.5 + (j + 0.5) / 4.0;
					in += hypot(px - cu, py - cv) <= r;
				}
			if (in) {
				uint8_t *p = rgb + 3 * ((size_t)y * w + x);
				for (int k = 0; k < 3; k++)
					p[k] = (uint8_t)((p[k] * (16 - in) + col[k] * in) / 16);
			}
		}
}

static void test_blob_centroid(void **state)
{
	int w = 200, h = 150;
	uint8_t *rgb = malloc((size_t)w * h * 3);
	static const uint8_t red[3] = {220, 20, 30}, blue[3] = {20, 60, 220};
	wl_hsv_range rr = {1, {170, 120, 80}, {8, 255, 255}}, br = {1, {105, 120, 80}, {125, 255, 255}};
	wl_blobber *b = NULL;
	wl_blob out[8];
	int n;
	(void)state;
	assert_non_null(rgb);
	for (int i = 0; i < w * h; i++) {
		rgb[3 * i] = 90;
		rgb[3 * i + 1] = 100;
		rgb[3 * i + 2] = 95;
	}
	draw_disk(rgb, w, h, 60.37, 70.81, 7.0, red);
	draw_disk(rgb, w, h, 140.0, 40.5, 5.0, blue);
	draw_disk(rgb, w, h, 20.0, 20.0, 1.2, red); /* a speck below min area */
	assert_int_equal(wl_blobber_create(&b, NULL), WL_OK);
	n = wl_blobber_find(b, rgb, 3 * w, 0, 0, w, h, &rr, 12, 100000, out, 8);
	assert_int_equal(n, 1);
	assert_true(fabs(out[0].cu - 60.37) < 0.1 && fabs(out[0].cv - 70.81) < 0.1);
	assert_true(fabs(out[0].area_px - PI * 49) < 12);
	/* inside a window (coordinates stay the frame's) */
	n = wl_blobber_find(b, rgb, 3 * w, 120, 20, 50, 50, &br, 12, 100000, out, 8);
	assert_int_equal(n, 1);
	assert_true(fabs(out[0].cu - 140.0) < 0.1 && fabs(out[0].cv - 40.5) < 0.1);
	assert_true(out[0].fill > 0.6);
	wl_blobber_destroy(b);
	free(rgb);
}

static void test_hsv_stats(void **state)
{
	/* a region half hue 176, half hue 2: the circular mean is 179 (or 0),
	 * not 89 as an arithmetic mean would say */
	int w = 10, h = 10;
	uint8_t rgb[300];
	wl_hsv_stats st;
	(void)state;
	for (int i = 0; i < w * h; i++) {
		int hue2 = i % 2 ? 176 : 2; /* OpenCV hue; build RGB with full S and V */
		double hd = hue2 * 2.0, f = fmod(hd / 60.0, 1.0);
		int sector = (int)(hd / 60.0) % 6;
		uint8_t r = 255, g = 0, b = 0;
		if (sector == 0) g = (uint8_t)lrint(255 * f);
		else { b = (uint8_t)lrint(255 * (1 - f)); }
		rgb[3 * i] = r;
		rgb[3 * i + 1] = g;
		rgb[3 * i + 2] = b;
	}
	wl_hsv_region_stats(rgb, 3 * w, 0, 0, w, h, NULL, &st);
	assert_int_equal(st.n, 100);
	assert_true(fabs(st.mean[0] - 179.0) < 1.0 || st.mean[0] < 1.0);
	assert_int_equal(st.p5[0], 176);
	assert_int_equal(st.p95[0], 2);
	assert_true(fabs(st.mean[1] - 255) < 0.5 && fabs(st.mean[2] - 255) < 0.5);
}

/* ---- options ---- */

static char tmpdir[256];

static void write_text(const char *path, const char *text)
{
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	fputs(text, f);
	fclose(f);
}

static void test_ids_and_robots(void **state)
{
	wl_track_opts o;
	wl_err e;
	char path[512];
	(void)state;
	wl_track_opts_init(&o);
	assert_int_equal(wl_track_parse_ids("3,7,12", &o, NULL), WL_OK);
	assert_int_equal(o.n_robots, 3);
	assert_int_equal(o.robots[2].id, 12);
	assert_true(o.restrict_ids);
	wl_track_opts_init(&o);
	assert_int_equal(wl_track_parse_ids("3,x", &o, &e), WL_EINVAL);
	assert_non_null(strstr(e.msg, "'x'"));

	snprintf(path, sizeof path, "%s/robots.csv", tmpdir);
	write_text(path, "id,plane_height_m,heading_offset_rad,body_diameter_m,front_hsv_lo,front_hsv_hi,back_hsv_lo,back_hsv_hi\n"
			 "1,0.25,0.1,0.12,\"170,100,80\",\"8,255,255\",\"100,100,80\",\"125,255,255\"\n"
			 "2,,,,\"40,100,80\",\"80,255,255\",,\n");
	wl_track_opts_init(&o);
	assert_int_equal(wl_track_load_robots(path, &o, &e), WL_OK);
	assert_int_equal(o.n_robots, 2);
	assert_true(fabs(o.robots[0].plane_height_m - 0.25) < 1e-12);
	assert_true(fabs(o.robots[0].heading_offset_rad - 0.1) < 1e-12);
	assert_true(o.robots[0].front.set && o.robots[0].back.set);
	assert_int_equal(o.robots[0].front.lo[0], 170);
	assert_int_equal(o.robots[0].front.hi[0], 8);
	assert_true(isnan(o.robots[1].plane_height_m));
	assert_true(o.robots[1].front.set && !o.robots[1].back.set);

	write_text(path, "id,front_hsv_lo,front_hsv_hi\n1,\"170,100,80\",\"8,255,255\"\n2,\"200,0,0\",\"8,255,255\"\n");
	wl_track_opts_init(&o);
	assert_int_equal(wl_track_load_robots(path, &o, &e), WL_EFORMAT);
	assert_non_null(strstr(e.msg, "robots.csv:3:"));
	assert_non_null(strstr(e.msg, "front_hsv_lo"));
	write_text(path, "id\n4\n4\n");
	wl_track_opts_init(&o);
	assert_int_equal(wl_track_load_robots(path, &o, &e), WL_EFORMAT);
	assert_non_null(strstr(e.msg, "twice"));
	unlink(path);
}

static void test_raw_writer(void **state)
{
	char path[512], *text = NULL;
	size_t len;
	wl_raw_writer *w = NULL;
	wl_track_obs obs[2];
	(void)state;
	/* numbers must keep '.' decimals under a decimal-comma locale */
	setlocale(LC_NUMERIC, "de_DE.UTF-8");
	snprintf(path, sizeof path, "%s/raw.csv", tmpdir);
	memset(obs, 0, sizeof obs);
	obs[0] = (wl_track_obs){.id = 3, .ok = 1, .u_px = 10.25, .v_px = 20.5, .x_m = 0.125, .y_m = -0.5,
				.heading_rad = 1.5, .margin = 80.0, .size_px = 41.5, .heading_source = WL_HS_TAG};
	obs[1] = (wl_track_obs){.id = 7, .ok = 0};
	assert_int_equal(wl_raw_open(path, &w, NULL), WL_OK);
	wl_raw_put(w, 0.033367, 1, obs, 2);
	assert_int_equal(wl_raw_commit(w, NULL), WL_OK);
	setlocale(LC_NUMERIC, "C");
	assert_int_equal(wl_read_file(path, 1 << 20, &text, &len, NULL), WL_OK);
	assert_string_equal(text,
			    "t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status,margin,size_px,heading_source\n"
			    "0.033367,1,3,10.250,20.500,0.125000,-0.500000,1.500000,ok,80.00,41.50,tag\n"
			    "0.033367,1,7,,,,,,lost,,,\n");
	free(text);
	/* abort leaves no file */
	unlink(path);
	assert_int_equal(wl_raw_open(path, &w, NULL), WL_OK);
	wl_raw_abort(w);
	assert_int_equal(access(path, F_OK), -1);
}

static int setup_dir(void **state)
{
	(void)state;
	snprintf(tmpdir, sizeof tmpdir, "/tmp/test_track.XXXXXX");
	return mkdtemp(tmpdir) ? 0 : -1;
}

static int teardown_dir(void **state)
{
	(void)state;
	return rmdir(tmpdir);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_tag_centre_convention),
		cmocka_unit_test(test_tag_window_and_rotation),
		cmocka_unit_test(test_tag_small_sizes),
		cmocka_unit_test(test_tag_families),
		cmocka_unit_test(test_hsv_matches_opencv),
		cmocka_unit_test(test_hsv_wrap),
		cmocka_unit_test(test_blob_centroid),
		cmocka_unit_test(test_hsv_stats),
		cmocka_unit_test(test_ids_and_robots),
		cmocka_unit_test(test_raw_writer),
	};
	return cmocka_run_group_tests(tests, setup_dir, teardown_dir);
}
