/*
 * test_track.c: the tracker's back ends on images drawn in memory: the
 * AprilTag boundary (pixel-centre convention, corner order, windows), HSV
 * against OpenCV, blob centroids, options and RAW.csv.
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

#include "calib/calib.h"
#include "core/afile.h"
#include "core/camera.h"
#include "decode/decode.h"
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
					double px = x - 0.5 + (i + 0.5) / 4.0 - cu,
					       py = y - 0.5 + (j + 0.5) / 4.0 - cv;
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
	assert_int_equal(wl_tagdet_render_cells("tag36h11", 587, cells, sizeof cells),
	                 0); /* 587 codes: 0..586 */
	assert_int_equal(wl_tagdet_render_cells("tag36h11", 586, cells, sizeof cells), 10);
}

/* ---- colour ---- */

static void test_hsv_matches_opencv(void **state)
{
	/* reference: python3-opencv 4.6, cv2.cvtColor(px, cv2.COLOR_RGB2HSV) on these uint8
	 * pixels (tests/data/references.md, "RGB to HSV"; tests/tools/regen-hsv.py) */
	static const int rgb[][3] = {{255, 0, 0},   {0, 255, 0},    {0, 0, 255},  {255, 255, 0},
	                             {200, 30, 40}, {250, 10, 200}, {10, 20, 30}, {128, 128, 128},
	                             {255, 128, 0}, {30, 200, 180}, {0, 0, 0},    {90, 60, 200}};
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
		if (sector == 0)
			g = (uint8_t)lrint(255 * f);
		else {
			b = (uint8_t)lrint(255 * (1 - f));
		}
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
	write_text(path, "id,plane_height_m,heading_offset_rad,body_diameter_m,front_hsv_lo,front_hsv_hi,"
	                 "back_hsv_lo,back_hsv_hi\n"
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

	write_text(path, "id,front_hsv_lo,front_hsv_hi\n1,\"170,100,80\",\"8,255,255\"\n2,\"200,0,0\",\"8,"
	                 "255,255\"\n");
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

/* ---- the tracker on rendered sequences ---- */

typedef struct {
	int id, visible;
	double x, y, h; /* tank metres on the marker plane, heading */
} scene_robot;

typedef struct {
	wl_camera cam; /* the camera whose pixels the calibration uses */
	int rot;       /* 0: cam is in coded pixels; else displayed, clip turned by rot */
	int w, h;      /* coded size */
	double z;      /* marker plane */
} scene;

static unsigned char tag_cells[32][100];

static int coded_to_plane(const scene *sc, double u, double v, double *x, double *y)
{
	if (sc->rot)
		wl_orient_to_displayed(sc->rot, sc->w, sc->h, u, v, &u, &v);
	return wl_camera_pixel_to_plane(&sc->cam, u, v, sc->z, x, y);
}

static void plane_to_coded(const scene *sc, double x, double y, double *u, double *v)
{
	double X[3] = {x, y, sc->z};
	wl_camera_project(&sc->cam, X, u, v);
	if (sc->rot)
		wl_orient_to_coded(sc->rot, sc->w, sc->h, *u, *v, u, v);
}

/* 3x3-supersampled tags of side 0.05 m on white discs (0.074 m, just
 * wider than the tag's diagonal), on a grey floor */
#define BODY_DIAMETER_M 0.074
static void render(const scene *sc, uint8_t *img, const scene_robot *rb, int n)
{
	const double side = 0.05, cell = side / 8.0, body = BODY_DIAMETER_M / 2;
	memset(img, 90, (size_t)sc->w * sc->h);
	for (int k = 0; k < n; k++) {
		double u0 = 1e9, v0 = 1e9, u1 = -1e9, v1 = -1e9, c = cos(rb[k].h), s = sin(rb[k].h);
		unsigned char *cells = tag_cells[rb[k].id];
		if (!rb[k].visible)
			continue;
		for (int q = 0; q < 4; q++) {
			double u, v;
			plane_to_coded(sc, rb[k].x + (q & 1 ? body : -body), rb[k].y + (q & 2 ? body : -body),
			               &u, &v);
			u0 = fmin(u0, u);
			v0 = fmin(v0, v);
			u1 = fmax(u1, u);
			v1 = fmax(v1, v);
		}
		for (int y = (int)fmax(0, floor(v0) - 1); y <= (int)fmin(sc->h - 1, ceil(v1) + 1); y++)
			for (int x = (int)fmax(0, floor(u0) - 1); x <= (int)fmin(sc->w - 1, ceil(u1) + 1);
			     x++) {
				int acc = 0;
				for (int j = 0; j < 3; j++)
					for (int i = 0; i < 3; i++) {
						double X, Y, dx, dy, tx, ty;
						int col, row, val = 90;
						coded_to_plane(sc, x - 1.0 / 3 + i / 3.0,
						               y - 1.0 / 3 + j / 3.0, &X, &Y);
						dx = X - rb[k].x;
						dy = Y - rb[k].y;
						/* the tag's up along the heading, its right 90 degrees
						 * clockwise */
						tx = s * dx - c * dy;
						ty = c * dx + s * dy;
						col = (int)floor(tx / cell + 5);
						row = (int)floor(-ty / cell + 5);
						if (col >= 0 && col < 10 && row >= 0 && row < 10)
							val = cells[row * 10 + col] ? 225 : 25;
						else if (hypot(dx, dy) < body)
							val = 225;
						else
							val = img[(size_t)y * sc->w + x] == 90
							              ? 90
							              : img[(size_t)y * sc->w + x];
						acc += val;
					}
				img[(size_t)y * sc->w + x] = (uint8_t)(acc / 9);
			}
	}
}

static void make_scene(scene *sc, int rot)
{
	double eye[3] = {0.7, 0.4, 2.0}, target[3] = {0.7, 0.4, 0.0};
	int wd = 960, hd = 540; /* displayed size */
	if (rot == 90 || rot == 270) {
		sc->w = hd;
		sc->h = wd;
	} else {
		sc->w = wd;
		sc->h = hd;
	}
	wl_camera_init(&sc->cam, wd, hd, 1100, 1100, (wd - 1) / 2.0, (hd - 1) / 2.0);
	sc->cam.dist[0] = -0.04; /* some barrel distortion, removed on the points */
	wl_camera_look_at(&sc->cam, eye, target, 0.0);
	sc->rot = rot;
	sc->z = 0.25;
	if (!rot) {
		sc->cam.width_px = sc->w;
		sc->cam.height_px = sc->h;
	}
}

static void make_cal(const scene *sc, wl_calib *cal)
{
	wl_calib_init(cal);
	cal->cam = sc->cam;
	cal->displayed = sc->rot != 0;
	cal->rotation_deg = sc->rot;
	cal->plane_height_m = sc->z;
}

typedef void (*motion_fn)(int frame, scene_robot *rb, int *n);

typedef struct {
	int frames, n_ok[2];
	double se_pos[2], se_head[2];
	int lost_at[400][2]; /* 1 when lost, per frame and robot slot */
	double x[400][2], y[400][2], hd[400][2];
	int ids[2];
} run_result;

static void run_sequence(const scene *sc, wl_track_opts *o, motion_fn mf, int frames, run_result *res)
{
	wl_calib cal;
	wl_tracker *tr = NULL;
	uint8_t *img = malloc((size_t)sc->w * sc->h);
	wl_err e;
	assert_non_null(img);
	for (int id = 0; id < 32; id++)
		assert_int_equal(wl_tagdet_render_cells("tag36h11", id, tag_cells[id], 100), 10);
	make_cal(sc, &cal);
	memset(res, 0, sizeof *res);
	assert_int_equal(wl_tracker_create(o, &cal, "test.json", sc->w, sc->h, sc->rot, &tr, &e), WL_OK);
	for (int f = 0; f < frames; f++) {
		scene_robot rb[2];
		int n = 0, no;
		const wl_track_obs *obs;
		wl_track_image im = {.width_px = sc->w,
		                     .height_px = sc->h,
		                     .luma = img,
		                     .luma_stride = sc->w,
		                     .t_s = f / 30.0,
		                     .index = f};
		mf(f, rb, &n);
		render(sc, img, rb, n);
		assert_int_equal(wl_tracker_frame(tr, &im, &obs, &no, &e), WL_OK);
		for (int k = 0; k < n; k++) {
			const wl_track_obs *ob = NULL;
			double dh;
			res->ids[k] = rb[k].id;
			for (int i = 0; i < no; i++)
				if (obs[i].id == rb[k].id)
					ob = &obs[i];
			res->lost_at[f][k] = !ob || !ob->ok;
			if (!ob || !ob->ok)
				continue;
			res->x[f][k] = ob->x_m;
			res->y[f][k] = ob->y_m;
			res->hd[f][k] = ob->heading_rad;
			res->n_ok[k]++;
			res->se_pos[k] += pow(ob->x_m - rb[k].x, 2) + pow(ob->y_m - rb[k].y, 2);
			dh = atan2(sin(ob->heading_rad - rb[k].h), cos(ob->heading_rad - rb[k].h));
			res->se_head[k] += dh * dh;
		}
	}
	res->frames = frames;
	wl_tracker_destroy(tr);
	free(img);
}

static void circle_ccw(int f, scene_robot *rb, int *n)
{
	double a = 2 * PI * f / 60.0; /* one turn in 2 s */
	rb[0] = (scene_robot){3, 1, 0.7 + 0.3 * cos(a), 0.4 + 0.2 * sin(a), 0};
	rb[0].h = atan2(0.2 * cos(a), -0.3 * sin(a)); /* along the path */
	*n = 1;
}

static void check_ccw(int rot)
{
	scene sc;
	wl_track_opts o;
	run_result *r = malloc(sizeof *r);
	double area = 0, turn = 0;
	assert_non_null(r);
	make_scene(&sc, rot);
	wl_track_opts_init(&o);
	run_sequence(&sc, &o, circle_ccw, 60, r);
	printf("# rot %d: %d/60 ok, position RMSE %.3f mm, heading RMSE %.3f deg\n", rot, r->n_ok[0],
	       1000 * sqrt(r->se_pos[0] / r->n_ok[0]), sqrt(r->se_head[0] / r->n_ok[0]) * 180 / PI);
	assert_int_equal(r->n_ok[0], 60);
	assert_true(1000 * sqrt(r->se_pos[0] / 60) < 1.0);      /* mm */
	assert_true(sqrt(r->se_head[0] / 60) * 180 / PI < 0.5); /* degrees */
	/* counter-clockwise in the tank: positive signed area (shoelace) and
	 * heading increasing by one turn */
	for (int f = 0; f < 60; f++) {
		int g = (f + 1) % 60;
		area += r->x[f][0] * r->y[g][0] - r->x[g][0] * r->y[f][0];
		if (f < 59)
			turn += atan2(sin(r->hd[f + 1][0] - r->hd[f][0]), cos(r->hd[f + 1][0] - r->hd[f][0]));
	}
	assert_true(area / 2 > 0.9 * PI * 0.3 * 0.2);
	assert_true(turn > 0.9 * 2 * PI * 59 / 60 && turn < 1.1 * 2 * PI);
	free(r);
}

static void test_tracker_ccw(void **state)
{
	(void)state;
	check_ccw(0);
}

static void test_tracker_rotation_metadata(void **state)
{
	/* the same tank scene seen through a clip stored turned (coded pixels
	 * differ, the calibration is in displayed pixels): same tank poses */
	(void)state;
	check_ccw(90);
	check_ccw(180);
	check_ccw(270);
}

static void pass_close(int f, scene_robot *rb, int *n)
{
	/* two robots on parallel lines 0.075 m apart (centre to centre, about
	 * one 0.074 m body diameter: the bodies all but touch) passing each
	 * other in opposite directions at 0.6 m/s */
	double s = (f - 30) * 0.02;
	rb[0] = (scene_robot){3, 1, 0.7 + s, 0.4 + 0.0375, 0};
	rb[1] = (scene_robot){7, 1, 0.7 - s, 0.4 - 0.0375, PI};
	*n = 2;
}

static void test_tracker_close_pass(void **state)
{
	scene sc;
	wl_track_opts o;
	run_result *r = malloc(sizeof *r);
	(void)state;
	assert_non_null(r);
	make_scene(&sc, 0);
	wl_track_opts_init(&o);
	run_sequence(&sc, &o, pass_close, 61, r);
	for (int k = 0; k < 2; k++) {
		assert_int_equal(r->n_ok[k], 61);
		/* each id stays on its own robot: an id swap would give ~70 mm */
		assert_true(1000 * sqrt(r->se_pos[k] / 61) < 1.0);
	}
	free(r);
}

static void hidden_second(int f, scene_robot *rb, int *n)
{
	double a = 2 * PI * f / 90.0;
	rb[0] = (scene_robot){5, f < 30 || f >= 60, 0.7 + 0.3 * cos(a), 0.4 + 0.2 * sin(a), 0};
	rb[0].h = atan2(0.2 * cos(a), -0.3 * sin(a));
	*n = 1;
}

static void test_tracker_occlusion(void **state)
{
	scene sc;
	wl_track_opts o;
	run_result *r = malloc(sizeof *r);
	int back = -1;
	(void)state;
	assert_non_null(r);
	make_scene(&sc, 0);
	wl_track_opts_init(&o);
	run_sequence(&sc, &o, hidden_second, 90, r);
	for (int f = 0; f < 30; f++)
		assert_false(r->lost_at[f][0]);
	for (int f = 30; f < 60; f++)
		assert_true(r->lost_at[f][0]); /* hidden for 1 s: lost, never invented */
	for (int f = 60; f < 90 && back < 0; f++)
		if (!r->lost_at[f][0])
			back = f;
	printf("# hidden frames 30-59, found again at frame %d\n", back);
	assert_true(back >= 60 && back <= 62); /* within 3 frames of reappearing */
	for (int f = back; f < 90; f++)
		assert_false(r->lost_at[f][0]);
	free(r);
}

static void at_edge(int f, scene_robot *rb, int *n)
{
	/* robot 9 slides out over the left frame edge; robot 4 is never shown */
	scene sc;
	double u, v;
	make_scene(&sc, 0);
	rb[0] = (scene_robot){9, 1, 0.0, 0.4, 0.3};
	/* place it so that its centre moves from 40 px to -20 px */
	for (double x = -0.5; x < 1.0; x += 0.0005) {
		plane_to_coded(&sc, x, 0.4, &u, &v);
		if (u >= 40 - 2 * f) {
			rb[0].x = x;
			break;
		}
	}
	*n = 1;
}

static void test_tracker_edge_and_unseen(void **state)
{
	scene sc;
	wl_track_opts o;
	wl_calib cal;
	wl_tracker *tr = NULL;
	uint8_t *img;
	int last_ok = -1;
	(void)state;
	make_scene(&sc, 0);
	make_cal(&sc, &cal);
	wl_track_opts_init(&o);
	assert_int_equal(wl_track_parse_ids("4,9", &o, NULL), WL_OK);
	img = malloc((size_t)sc.w * sc.h);
	assert_non_null(img);
	for (int id = 0; id < 32; id++)
		wl_tagdet_render_cells("tag36h11", id, tag_cells[id], 100);
	assert_int_equal(wl_tracker_create(&o, &cal, "t.json", sc.w, sc.h, 0, &tr, NULL), WL_OK);
	for (int f = 0; f < 30; f++) {
		scene_robot rb[1];
		int n, no;
		const wl_track_obs *obs;
		wl_track_image im = {.width_px = sc.w,
		                     .height_px = sc.h,
		                     .luma = img,
		                     .luma_stride = sc.w,
		                     .t_s = f / 30.0,
		                     .index = f};
		at_edge(f, rb, &n);
		render(&sc, img, rb, n);
		assert_int_equal(wl_tracker_frame(tr, &im, &obs, &no, NULL), WL_OK);
		/* both listed robots on every frame, in id order; 4 is never seen */
		assert_int_equal(no, 2);
		assert_int_equal(obs[0].id, 4);
		assert_false(obs[0].ok);
		assert_true(isnan(obs[0].x_m));
		assert_int_equal(obs[1].id, 9);
		if (obs[1].ok) {
			last_ok = f;
			/* accepted only while the whole tag is inside the frame */
			assert_true(obs[1].u_px - 0.5 * obs[1].size_px > 2.0);
		}
	}
	assert_true(last_ok >= 0 && last_ok < 29);
	assert_true(wl_tracker_stats(tr)->rejected_edge > 0);
	wl_tracker_destroy(tr);
	free(img);
}

static void test_tracker_roi(void **state)
{
	/* frames holding only the region wl_tracker_roi asked for (the rest
	 * stale: a decoy tag of the same id outside it): every frame tracked,
	 * no full-frame search after the first, the decoy never seen */
	scene sc;
	wl_track_opts o;
	wl_calib cal;
	wl_tracker *tr = NULL;
	uint8_t *img, *stale;
	int roi[4] = {0, 0, 0, 0}, partial = 0;
	double se = 0, area = 0;
	(void)state;
	make_scene(&sc, 0);
	make_cal(&sc, &cal);
	wl_track_opts_init(&o);
	assert_int_equal(wl_track_parse_ids("3", &o, NULL), WL_OK);
	img = malloc((size_t)sc.w * sc.h);
	stale = malloc((size_t)sc.w * sc.h);
	assert_true(img && stale);
	for (int id = 0; id < 32; id++)
		wl_tagdet_render_cells("tag36h11", id, tag_cells[id], 100);
	{
		scene_robot decoy = {3, 1, 0.2, 0.75, 1.0};
		render(&sc, stale, &decoy, 1);
	}
	assert_int_equal(wl_tracker_create(&o, &cal, "t.json", sc.w, sc.h, 0, &tr, NULL), WL_OK);
	assert_int_equal(wl_tracker_roi(tr, 0.1, roi), 1); /* nothing known yet: whole frames */
	assert_true(roi[2] == sc.w && roi[3] == sc.h);
	for (int f = 0; f < 60; f++) {
		scene_robot rb[1];
		int n, no;
		const wl_track_obs *obs;
		wl_track_image im = {.width_px = sc.w,
		                     .height_px = sc.h,
		                     .luma = img,
		                     .luma_stride = sc.w,
		                     .t_s = f / 30.0,
		                     .index = f};
		circle_ccw(f, rb, &n);
		render(&sc, img, rb, n);
		if (roi[2] > 0) {
			/* outside the region: the stale picture with the decoy */
			for (int y = 0; y < sc.h; y++)
				for (int x = 0; x < sc.w; x++)
					if (x < roi[0] || x >= roi[0] + roi[2] || y < roi[1] ||
					    y >= roi[1] + roi[3])
						img[(size_t)y * sc.w + x] = stale[(size_t)y * sc.w + x];
			memcpy(im.roi, roi, sizeof roi);
			partial++;
		}
		assert_int_equal(wl_tracker_frame(tr, &im, &obs, &no, NULL), WL_OK);
		assert_int_equal(no, 1);
		assert_true(obs[0].ok);
		se += pow(obs[0].x_m - rb[0].x, 2) + pow(obs[0].y_m - rb[0].y, 2);
		/* the next frames come 4 frames late at most */
		if (wl_tracker_roi(tr, 5 / 30.0, roi))
			roi[2] = roi[3] = 0;
		else
			area += (double)roi[2] * roi[3] / ((double)sc.w * sc.h);
	}
	printf("# region copied: %.1f %% of the frame on average (robot at 0.8 m/s)\n", 100 * area / partial);
	assert_true(partial >= 55);
	assert_true(area / partial < 0.5);
	assert_int_equal(wl_tracker_stats(tr)->full_scans, 1);
	assert_true(1000 * sqrt(se / 60) < 1.0);
	wl_tracker_destroy(tr);
	free(img);
	free(stale);
}

static void test_tracker_calibration_mismatch(void **state)
{
	scene sc;
	wl_track_opts o;
	wl_calib cal;
	wl_tracker *tr = NULL;
	wl_err e;
	(void)state;
	make_scene(&sc, 90);
	make_cal(&sc, &cal);
	wl_track_opts_init(&o);
	/* displayed calibration of a clip turned 90 degrees, used on one turned 270 */
	assert_int_equal(wl_tracker_create(&o, &cal, "cal.json", sc.w, sc.h, 270, &tr, &e), WL_ECALIB);
	assert_null(tr);
	assert_non_null(strstr(e.msg, "cal.json"));
	/* a calibration of another image size */
	make_scene(&sc, 0);
	make_cal(&sc, &cal);
	assert_int_equal(wl_tracker_create(&o, &cal, "cal.json", 1920, 1080, 0, &tr, &e), WL_ECALIB);
	assert_non_null(strstr(e.msg, "1920"));
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
	        cmocka_unit_test(test_tracker_ccw),
	        cmocka_unit_test(test_tracker_rotation_metadata),
	        cmocka_unit_test(test_tracker_close_pass),
	        cmocka_unit_test(test_tracker_occlusion),
	        cmocka_unit_test(test_tracker_edge_and_unseen),
	        cmocka_unit_test(test_tracker_roi),
	        cmocka_unit_test(test_tracker_calibration_mismatch),
	};
	return cmocka_run_group_tests(tests, setup_dir, teardown_dir);
}
