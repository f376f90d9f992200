/*
 * test_synth.c: the synthetic-footage renderer.  The renderer's geometry is
 * checked from outside the project: frames are handed to the AprilTag
 * library's detector (Debian libapriltag 3.3.0) and the detected tag centres
 * compared with the truth projected through the camera model; the tag
 * texture is compared cell by cell with AprilTag's own apriltag_to_image.
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

#include <cmocka.h>

#include <apriltag.h>
#include <common/image_u8.h>
#include <tag36h11.h>

#include "synth/render.c" /* static helpers: tex_build */
#include "synth/synth.h"

/* A scene with six floor markers, a tilted distorted camera and one tag robot. */
static const char scene_tags[] =
        "{ \"description\": \"invented test scene\", \"seed\": 5,"
        "  \"tank\": { \"size_m\": [2.4, 1.6] },"
        "  \"markers\": ["
        "    { \"id\": 0, \"center_m\": [0.15, 0.15], \"size_m\": 0.12 },"
        "    { \"id\": 1, \"center_m\": [2.25, 0.15], \"size_m\": 0.12, \"yaw_deg\": 30 },"
        "    { \"id\": 2, \"center_m\": [2.25, 1.45], \"size_m\": 0.12 },"
        "    { \"id\": 3, \"center_m\": [0.15, 1.45], \"size_m\": 0.12, \"yaw_deg\": -70 },"
        "    { \"id\": 4, \"center_m\": [1.20, 0.15], \"size_m\": 0.12 },"
        "    { \"id\": 5, \"center_m\": [1.20, 1.45], \"size_m\": 0.12, \"yaw_deg\": 180 } ],"
        "  \"camera\": { \"width_px\": 1280, \"height_px\": 720, \"hfov_deg\": 75, \"k1\": -0.06, \"k2\": "
        "0.01,"
        "              \"position_m\": [1.2, 0.7, 2.0], \"tilt_deg\": 4, \"tilt_dir_deg\": 90, \"yaw_deg\": "
        "3 },"
        "  \"timing\": { \"fps\": 30, \"duration_s\": 4 },"
        "  \"effects\": { \"supersample\": 3 },"
        "  \"robots\": [ { \"id\": 10, \"diameter_m\": 0.12, \"height_m\": 0.25,"
        "     \"marker\": { \"type\": \"tag\", \"tag_id\": 10, \"size_m\": 0.07 },"
        "     \"path\": { \"start_m\": [0.9, 0.6], \"heading_deg\": 35, \"speed_mps\": 0.1 } } ] }";

static void load(const char *text, wl_synth_scene *sc)
{
	wl_err err = {0};
	wl_status st = wl_synth_parse("test.json", text, strlen(text), sc, &err);
	if (st)
		fprintf(stderr, "%s\n", err.msg);
	assert_int_equal(st, WL_OK);
}

/* Renders frame k and returns its luma (BT.601 weights); free() it. */
static uint8_t *render_luma_r(wl_synth_renderer *r, const wl_synth_scene *sc, long k)
{
	int w = sc->cam.width_px, h = sc->cam.height_px;
	uint8_t *rgb = malloc((size_t)w * h * 3), *y = malloc((size_t)w * h);
	wl_err err = {0};
	assert_non_null(rgb);
	assert_non_null(y);
	assert_int_equal(wl_synth_render_frame(r, k, rgb, 3 * w, &err), WL_OK);
	for (size_t i = 0; i < (size_t)w * h; i++)
		y[i] = (uint8_t)lround(0.299 * rgb[3 * i] + 0.587 * rgb[3 * i + 1] + 0.114 * rgb[3 * i + 2]);
	free(rgb);
	return y;
}

static uint8_t *render_luma(const wl_synth_scene *sc, long k)
{
	wl_synth_renderer *r = NULL;
	wl_err err = {0};
	assert_int_equal(wl_synth_renderer_create(sc, 2, &r, &err), WL_OK);
	uint8_t *y = render_luma_r(r, sc, k);
	wl_synth_renderer_destroy(r);
	return y;
}

static zarray_t *detect(apriltag_detector_t *td, uint8_t *y, int w, int h)
{
	image_u8_t im = {.width = w, .height = h, .stride = w, .buf = y};
	return apriltag_detector_detect(td, &im);
}

static apriltag_detector_t *make_detector(apriltag_family_t *tf)
{
	apriltag_detector_t *td = apriltag_detector_create();
	apriltag_detector_add_family_bits(td, tf, 1);
	td->quad_decimate = 1;
	td->refine_edges = 1;
	td->nthreads = 2;
	return td;
}

/* (a) tag texture = AprilTag's own rendering of the code, cell by cell. */
static void test_texture_matches_apriltag(void **state)
{
	apriltag_family_t *tf = tag36h11_create();
	(void)state;
	for (int id = 0; id < 587; id += 29) {
		tag_tex t;
		image_u8_t *im = apriltag_to_image(tf, id);
		assert_true(tex_build(tf, id, &t));
		assert_int_equal(t.total, im->width);
		for (int yy = 0; yy < im->height; yy++)
			for (int xx = 0; xx < im->width; xx++)
				assert_int_equal(t.cells[yy * t.total + xx],
				                 im->buf[yy * im->stride + xx] ? 1 : 0);
		free(t.cells);
		image_u8_destroy(im);
	}
	tag36h11_destroy(tf);
}

/* (a) render -> AprilTag detector -> centres within 0.5 px of the projected
 * truth; heading from the detected corners matches the truth. */
static void test_round_trip_detection(void **state)
{
	wl_synth_scene sc;
	apriltag_family_t *tf = tag36h11_create();
	apriltag_detector_t *td = make_detector(tf);
	double worst = 0;
	int found = 0;
	(void)state;
	wl_synth_renderer *r = NULL;
	wl_err err = {0};
	load(scene_tags, &sc);
	assert_int_equal(wl_synth_renderer_create(&sc, 2, &r, &err), WL_OK);
	for (long k = 0; k < 120; k += 59) {
		uint8_t *y = render_luma_r(r, &sc, k);
		zarray_t *dets = detect(td, y, sc.cam.width_px, sc.cam.height_px);
		wl_synth_pose pose;
		wl_synth_robot_pose(&sc, 0, wl_synth_frame_time(&sc, k), &pose);
		int seen_robot = 0, seen_markers = 0;
		for (int i = 0; i < zarray_size(dets); i++) {
			apriltag_detection_t *d;
			double X[3] = {0, 0, 0}, u, v, yaw_true, ex, ey, exu, exv;
			zarray_get(dets, i, &d);
			assert_int_equal(d->hamming, 0);
			if (d->id == 10) {
				X[0] = pose.x_m;
				X[1] = pose.y_m;
				X[2] = sc.robots[0].height_m;
				yaw_true = pose.heading_rad; /* tag up = heading (offset 0) */
				seen_robot++;
			} else {
				int m = -1;
				for (int j = 0; j < sc.n_markers; j++)
					if (sc.markers[j].id == d->id)
						m = j;
				assert_true(m >= 0);
				X[0] = sc.markers[m].x_m;
				X[1] = sc.markers[m].y_m;
				yaw_true = sc.markers[m].yaw_rad + WL_PI / 2; /* up = right + 90 deg */
				seen_markers++;
			}
			assert_true(wl_camera_project_water(&sc.cam, X, &u, &v));
			/* AprilTag's pixel centres are at +0.5 (PITFALLS.md) */
			double e = hypot(d->c[0] - 0.5 - u, d->c[1] - 0.5 - v);
			if (e > worst)
				worst = e;
			assert_true(e <= 0.5);
			/* the tag's top edge: the detector's corners p[2], p[3]
			 * (ideal y = -1, see docs/synth.md) back-projected to the
			 * tag's plane give its "up" direction */
			assert_true(wl_camera_pixel_to_plane_water(
			        &sc.cam, 0.5 * (d->p[2][0] + d->p[3][0]) - 0.5,
			        0.5 * (d->p[2][1] + d->p[3][1]) - 0.5, X[2], &ex, &ey));
			assert_true(wl_camera_pixel_to_plane_water(&sc.cam, d->c[0] - 0.5, d->c[1] - 0.5,
			                                           X[2], &exu, &exv));
			double yaw_det = atan2(ey - exv, ex - exu);
			double dyaw = remainder(yaw_det - yaw_true, 2 * WL_PI);
			assert_true(fabs(dyaw) < 2.0 * WL_PI / 180);
		}
		assert_int_equal(seen_robot, 1);
		assert_int_equal(seen_markers, sc.n_markers);
		found += seen_robot + seen_markers;
		apriltag_detections_destroy(dets);
		free(y);
	}
	printf("round trip: %d detections, worst centre error %.3f px\n", found, worst);
	wl_synth_renderer_destroy(r);
	apriltag_detector_destroy(td);
	tag36h11_destroy(tf);
}

/* A marker raised on a block (z_m) and a camera bumped mid-run
 * (camera_move): the detected centres match the projection through the
 * camera of the frame's time at the card's height, within 0.5 px. */
static void test_raised_marker_and_move(void **state)
{
	static const char text[] =
	        "{ \"description\": \"invented test scene\", \"tank\": { \"size_m\": [1.6, 1.0] },"
	        "  \"markers\": [ { \"id\": 7, \"center_m\": [0.2, 0.2], \"size_m\": 0.1 },"
	        "                 { \"id\": 8, \"center_m\": [1.4, 0.8], \"size_m\": 0.1, \"z_m\": 0.15 } ],"
	        "  \"camera\": { \"width_px\": 960, \"height_px\": 640, \"hfov_deg\": 70, \"position_m\": "
	        "[0.8, 0.5, 1.5], \"principal_px\": [489.5, 312.5] },"
	        "  \"camera_move\": { \"t_s\": 0.5, \"tilt_deg\": 0.3, \"yaw_deg\": 0.2 },"
	        "  \"timing\": { \"fps\": 10, \"duration_s\": 1 } }";
	wl_synth_scene sc;
	apriltag_family_t *tf = tag36h11_create();
	apriltag_detector_t *td = make_detector(tf);
	double worst = 0, moved = 0;
	wl_synth_renderer *r = NULL;
	wl_err err = {0};
	(void)state;
	load(text, &sc);
	assert_true(sc.has_move);
	assert_true(wl_synth_camera_at(&sc, 0.4) == &sc.cam && wl_synth_camera_at(&sc, 0.5) == &sc.cam_moved);
	assert_int_equal(wl_synth_renderer_create(&sc, 2, &r, &err), WL_OK);
	for (long k = 0; k < 10; k += 9) {
		double t = wl_synth_frame_time(&sc, k);
		const wl_camera *cam = wl_synth_camera_at(&sc, t);
		uint8_t *y = render_luma_r(r, &sc, k);
		zarray_t *dets = detect(td, y, sc.cam.width_px, sc.cam.height_px);
		assert_int_equal(zarray_size(dets), 2);
		for (int i = 0; i < zarray_size(dets); i++) {
			apriltag_detection_t *d;
			const wl_synth_marker *m;
			double X[3], u, v, u0, v0;
			zarray_get(dets, i, &d);
			m = &sc.markers[d->id == 7 ? 0 : 1];
			X[0] = m->x_m;
			X[1] = m->y_m;
			X[2] = m->z_m;
			assert_true(wl_camera_project(cam, X, &u, &v));
			assert_true(wl_camera_project(&sc.cam, X, &u0, &v0));
			worst = fmax(worst, hypot(d->c[0] - 0.5 - u, d->c[1] - 0.5 - v));
			moved = fmax(moved, hypot(u - u0, v - v0));
		}
		apriltag_detections_destroy(dets);
		free(y);
	}
	printf("raised marker and camera move: worst centre error %.3f px, the move shifts markers by %.1f "
	       "px\n",
	       worst, moved);
	assert_true(worst <= 0.5);
	assert_true(moved > 3); /* 0.3 deg at f = 685 px: ~3.6 px */
	wl_synth_renderer_destroy(r);
	apriltag_detector_destroy(td);
	tag36h11_destroy(tf);
}

/* (a') submerged markers: refraction through wl_camera_project_water. */
static void test_round_trip_water(void **state)
{
	static const char text[] =
	        "{ \"tank\": { \"size_m\": [1.6, 1.0] }, \"water_depth_m\": 0.3,"
	        "  \"markers\": [ { \"id\": 7, \"center_m\": [0.2, 0.2], \"size_m\": 0.1 },"
	        "                 { \"id\": 8, \"center_m\": [1.4, 0.8], \"size_m\": 0.1 } ],"
	        "  \"camera\": { \"width_px\": 960, \"height_px\": 640, \"hfov_deg\": 70, \"position_m\": "
	        "[0.8, 0.5, 1.5] } }";
	wl_synth_scene sc;
	apriltag_family_t *tf = tag36h11_create();
	apriltag_detector_t *td = make_detector(tf);
	(void)state;
	load(text, &sc);
	uint8_t *y = render_luma(&sc, 0);
	zarray_t *dets = detect(td, y, sc.cam.width_px, sc.cam.height_px);
	assert_int_equal(zarray_size(dets), 2);
	for (int i = 0; i < zarray_size(dets); i++) {
		apriltag_detection_t *d;
		zarray_get(dets, i, &d);
		const wl_synth_marker *m = &sc.markers[d->id == 7 ? 0 : 1];
		double X[3] = {m->x_m, m->y_m, 0}, u, v, ud, vd;
		wl_camera_project_water(&sc.cam, X, &u, &v);
		assert_true(hypot(d->c[0] - 0.5 - u, d->c[1] - 0.5 - v) <= 0.5);
		/* and it really is displaced from the dry projection */
		wl_camera_project(&sc.cam, X, &ud, &vd);
		assert_true(hypot(u - ud, v - vd) > 3);
	}
	apriltag_detections_destroy(dets);
	free(y);
	apriltag_detector_destroy(td);
	tag36h11_destroy(tf);
}

/* (b) handedness: a counter-clockwise arc has increasing heading in the
 * truth, and in pixel axes (u right, v down: left-handed) it turns the other
 * way: the signed area (shoelace) of the projected path is negative, i.e.
 * atan2(v - vc, u - uc) decreases ("clockwise" in pixel axes).  A viewer of
 * a nadir image sees it counter-clockwise, as from above. */
static void test_handedness(void **state)
{
	static const char text[] =
	        "{ \"tank\": { \"size_m\": [2.4, 1.6] },"
	        "  \"camera\": { \"position_m\": [1.2, 0.8, 2.0] },"
	        "  \"robots\": [ { \"marker\": { \"type\": \"tag\", \"tag_id\": 3 },"
	        "     \"path\": { \"start_m\": [1.2, 0.3], \"speed_mps\": 0.2, \"curvature_1pm\": 2 } } ] }";
	wl_synth_scene sc;
	double prev = -1e9, unwrapped = 0, last = 0, area_px = 0, area_m = 0, u0 = 0, v0 = 0, x0 = 0, y0 = 0;
	int n = 64;
	(void)state;
	load(text, &sc);
	/* one full circle: 2 pi r / v = 2 pi * 0.5 / 0.2 s */
	for (int i = 0; i <= n; i++) {
		wl_synth_pose p;
		double t = (2 * WL_PI * 0.5 / 0.2) * i / n, X[3], u, v;
		wl_synth_robot_pose(&sc, 0, t, &p);
		if (i > 0)
			unwrapped += remainder(p.heading_rad - last, 2 * WL_PI);
		last = p.heading_rad;
		assert_true(unwrapped > prev);
		prev = unwrapped;
		X[0] = p.x_m;
		X[1] = p.y_m;
		X[2] = sc.robots[0].height_m;
		assert_true(wl_camera_project(&sc.cam, X, &u, &v));
		if (i > 0) {
			area_px += u0 * v - u * v0;
			area_m += x0 * p.y_m - p.x_m * y0;
		}
		u0 = u;
		v0 = v;
		x0 = p.x_m;
		y0 = p.y_m;
	}
	assert_float_equal(unwrapped, 2 * WL_PI, 1e-9);
	assert_true(area_m > 0);  /* counter-clockwise in the tank */
	assert_true(area_px < 0); /* clockwise in pixel axes */
	/* the circle of radius 1/curvature, area pi r^2 (64-gon: 0.16% less) */
	assert_float_equal(0.5 * area_m, WL_PI * 0.25, 0.0025 * WL_PI * 0.25);
}

/* The path model: rest, linear speed ramp, cruise; oscillation in heading. */
static void test_path_model(void **state)
{
	static const char text[] =
	        "{ \"tank\": { \"size_m\": [4, 4] }, \"camera\": { \"position_m\": [2, 2, 3] },"
	        "  \"robots\": [ { \"marker\": { \"type\": \"caps\" },"
	        "     \"path\": { \"start_m\": [1, 1], \"heading_deg\": 90, \"speed_mps\": 0.2, "
	        "\"curvature_1pm\": -1,"
	        "                 \"rest_s\": 1, \"accel_s\": 2, \"yaw_osc_deg\": 10, \"yaw_osc_hz\": 0.5 } "
	        "} ] }";
	wl_synth_scene sc;
	wl_synth_pose p;
	(void)state;
	load(text, &sc);
	wl_synth_robot_pose(&sc, 0, 0.5, &p);
	assert_float_equal(p.x_m, 1, 1e-12);
	assert_float_equal(p.heading_rad, WL_PI / 2, 1e-12);
	assert_float_equal(p.speed_mps, 0, 1e-12);
	wl_synth_robot_pose(&sc, 0, 2, &p);
	assert_float_equal(p.speed_mps, 0.1, 1e-12); /* half way up the ramp */
	/* clockwise circle (curvature -1) centred 1 m to the right of the start:
	 * every point at distance 1 from (2, 1) */
	for (double t = 0; t < 30; t += 0.7) {
		wl_synth_robot_pose(&sc, 0, t, &p);
		assert_float_equal(hypot(p.x_m - 2, p.y_m - 1), 1.0, 1e-9);
	}
	/* cruise at t = 3 + 1.5 s (quarter period of 0.5 Hz past 3 s is 0.5 s):
	 * s = 0.2 * 2 / 2 + 0.2 * (t - 3); tangent = 90 deg - s;
	 * oscillation term 10 deg * sin(2 pi 0.5 (t - 1)) */
	double t = 4.5, s = 0.2 + 0.2 * 1.5, tangent = WL_PI / 2 - s;
	double osc = 10 * WL_PI / 180 * sin(2 * WL_PI * 0.5 * (t - 1));
	wl_synth_robot_pose(&sc, 0, t, &p);
	assert_float_equal(p.heading_rad, tangent + osc, 1e-12);
}

/* (c) jittered frame times: strictly increasing, multiples of the time
 * base, intervals really varying within (1 +- jitter) / fps. */
static void test_vfr_times(void **state)
{
	static const char text[] = "{ \"tank\": { \"size_m\": [1, 1] }, \"camera\": {},"
	                           "  \"timing\": { \"fps\": 30, \"duration_s\": 20, \"jitter\": 0.5, "
	                           "\"time_base_den\": 1000 } }";
	wl_synth_scene sc;
	double lo = 1e9, hi = 0;
	(void)state;
	load(text, &sc);
	assert_int_equal(wl_synth_frame_count(&sc), 600);
	assert_int_equal(wl_synth_frame_pts(&sc, 0), 0);
	for (long k = 1; k < 600; k++) {
		int64_t a = wl_synth_frame_pts(&sc, k - 1), b = wl_synth_frame_pts(&sc, k);
		assert_true(b > a);
		assert_float_equal(wl_synth_frame_time(&sc, k), b / 1000.0, 1e-15);
		double dt = (b - a) / 1000.0;
		lo = fmin(lo, dt);
		hi = fmax(hi, dt);
	}
	/* bounds (1 +- 0.5) / 30 s, widened by the 1 ms rounding */
	assert_true(lo >= 0.5 / 30 - 0.001);
	assert_true(hi <= 1.5 / 30 + 0.001);
	assert_true(hi - lo > 0.02); /* it does jitter */
	/* the same scene gives the same times (deterministic) */
	wl_synth_scene sc2;
	load(text, &sc2);
	assert_int_equal(wl_synth_frame_pts(&sc2, 377), wl_synth_frame_pts(&sc, 377));
}

/* Bad scenes: the message names the file and the key. */
static void check_bad(const char *text, const char *want)
{
	wl_synth_scene sc;
	wl_err err = {0};
	assert_int_not_equal(wl_synth_parse("bad.json", text, strlen(text), &sc, &err), WL_OK);
	if (!strstr(err.msg, want))
		fprintf(stderr, "message '%s' lacks '%s'\n", err.msg, want);
	assert_non_null(strstr(err.msg, want));
	assert_non_null(strstr(err.msg, "bad.json"));
}

static void test_bad_scenes(void **state)
{
	(void)state;
	check_bad("{ \"camera\": {} }", "'tank' is missing");
	check_bad("{ \"tank\": { \"size_m\": [1] }, \"camera\": {} }", "tank: key 'size_m'");
	check_bad("{ \"tank\": { \"size_m\": [1, 1] }, \"camera\": { \"width_px\": \"big\" } }",
	          "camera: key 'width_px' must be a number");
	check_bad("{ \"tank\": { \"size_m\": [1, 1] }, \"camera\": {}, \"robots\": [ { \"marker\": { "
	          "\"type\": \"tag\","
	          " \"tag_id\": 1 }, \"path\": { \"sped_mps\": 1 } } ] }",
	          "robots[0].path: key 'sped_mps' is not known");
	check_bad("{ \"tank\": { \"size_m\": [1, 1] }, \"camera\": {}, \"robots\": [ { \"marker\": { "
	          "\"type\": \"tag\" } } ] }",
	          "robots[0].marker: key 'tag_id' is missing");
	check_bad("{ \"tank\": { \"size_m\": [1, 1] }, \"camera\": { \"width_px\": 641 } }", "must be even");
	check_bad("{ \"tank\": { \"size_m\": [1, 1] },\n \"camera\": { ]", "bad.json:2:");
}

static void render_rgb(wl_synth_renderer *r, const wl_synth_scene *sc, double t, long k, uint8_t *rgb)
{
	wl_err err = {0};
	assert_int_equal(wl_synth_render_at(r, t, k, rgb, 3 * sc->cam.width_px, &err), WL_OK);
}

static const uint8_t *px(const wl_synth_scene *sc, const uint8_t *rgb, double u, double v)
{
	return rgb + ((size_t)lround(v) * sc->cam.width_px + (size_t)lround(u)) * 3;
}

/* Caps: the front cap lies ahead along the heading, the back cap behind;
 * occlusion intervals hide the robot (background pixels only). */
static void test_caps_and_occlusion(void **state)
{
	static const char text[] =
	        "{ \"tank\": { \"size_m\": [1.2, 0.8], \"floor_rgb\": [200, 200, 200] },"
	        "  \"camera\": { \"width_px\": 640, \"height_px\": 480, \"hfov_deg\": 60, \"position_m\": "
	        "[0.6, 0.4, 1.2] },"
	        "  \"robots\": [ { \"diameter_m\": 0.16, \"height_m\": 0.1, \"disc_rgb\": [30, 30, 30],"
	        "     \"marker\": { \"type\": \"caps\", \"front_rgb\": [250, 0, 0], \"back_rgb\": [0, 0, "
	        "250],"
	        "                   \"cap_diameter_m\": 0.05, \"offset_m\": 0.05 },"
	        "     \"path\": { \"start_m\": [0.6, 0.4], \"heading_deg\": 120, \"speed_mps\": 0 },"
	        "     \"occlusions\": [ [1.0, 2.0] ] } ] }";
	wl_synth_scene sc;
	wl_synth_renderer *r = NULL;
	wl_err err = {0};
	uint8_t *rgb;
	double h = 120 * WL_PI / 180, X[3], u, v;
	(void)state;
	load(text, &sc);
	rgb = malloc((size_t)640 * 480 * 3);
	assert_int_equal(wl_synth_renderer_create(&sc, 2, &r, &err), WL_OK);
	render_rgb(r, &sc, 0.5, 0, rgb);
	X[2] = 0.1;
	X[0] = 0.6 + 0.05 * cos(h);
	X[1] = 0.4 + 0.05 * sin(h);
	wl_camera_project(&sc.cam, X, &u, &v);
	assert_memory_equal(px(&sc, rgb, u, v), ((uint8_t[]){250, 0, 0}), 3);
	X[0] = 0.6 - 0.05 * cos(h);
	X[1] = 0.4 - 0.05 * sin(h);
	wl_camera_project(&sc.cam, X, &u, &v);
	assert_memory_equal(px(&sc, rgb, u, v), ((uint8_t[]){0, 0, 250}), 3);
	X[0] = 0.6 + 0.065 * cos(h + WL_PI / 2); /* beside the caps: the disc */
	X[1] = 0.4 + 0.065 * sin(h + WL_PI / 2);
	wl_camera_project(&sc.cam, X, &u, &v);
	assert_memory_equal(px(&sc, rgb, u, v), ((uint8_t[]){30, 30, 30}), 3);
	/* hidden at t = 1.5 s: the floor colour where the disc was */
	render_rgb(r, &sc, 1.5, 45, rgb);
	assert_memory_equal(px(&sc, rgb, u, v), ((uint8_t[]){200, 200, 200}), 3);
	wl_synth_pose p;
	wl_synth_robot_pose(&sc, 0, 1.5, &p);
	assert_int_equal(p.visible, 0);
	wl_synth_robot_pose(&sc, 0, 2.01, &p);
	assert_int_equal(p.visible, 1);
	wl_synth_renderer_destroy(r);
	free(rgb);
}

/* Noise: its standard deviation on a flat floor is the requested sigma;
 * the same frame renders the same pixels, another frame other noise. */
static void test_noise(void **state)
{
	static const char text[] =
	        "{ \"seed\": 9, \"tank\": { \"size_m\": [4, 4], \"floor_rgb\": [128, 128, 128] },"
	        "  \"camera\": { \"width_px\": 320, \"height_px\": 240, \"hfov_deg\": 40, \"position_m\": "
	        "[2, 2, 2] },"
	        "  \"effects\": { \"noise_sigma\": 4 } }";
	wl_synth_scene sc;
	wl_synth_renderer *r = NULL;
	wl_err err = {0};
	size_t n = (size_t)320 * 240 * 3;
	uint8_t *a = malloc(n), *b = malloc(n), *c = malloc(n);
	double sum = 0, sum2 = 0;
	(void)state;
	load(text, &sc);
	assert_int_equal(wl_synth_renderer_create(&sc, 2, &r, &err), WL_OK);
	render_rgb(r, &sc, 0, 3, a);
	render_rgb(r, &sc, 0, 4, b);
	render_rgb(r, &sc, 0, 3, c);
	assert_memory_equal(a, c, n);
	assert_memory_not_equal(a, b, n);
	for (size_t i = 0; i < n; i++) {
		sum += a[i] - 128.0;
		sum2 += (a[i] - 128.0) * (a[i] - 128.0);
	}
	double mean = sum / n, sd = sqrt(sum2 / n - mean * mean);
	printf("noise: sd %.4f mean %.4f\n", sd, mean);
	/* rounding the Gaussian to whole levels adds 1/12 level^2 of variance */
	assert_float_equal(sd, sqrt(16 + 1.0 / 12), 0.1);
	assert_float_equal(mean, 0, 0.05);
	wl_synth_renderer_destroy(r);
	free(a);
	free(b);
	free(c);
}

/* Motion blur averages the sub-frame renders: a blurred frame equals the
 * mean of unblurred frames at the sub-frame times (to rounding). */
static void test_motion_blur(void **state)
{
	static const char base[] =
	        "{ \"tank\": { \"size_m\": [1.2, 0.8] },"
	        "  \"camera\": { \"width_px\": 320, \"height_px\": 240, \"hfov_deg\": 60, \"position_m\": "
	        "[0.6, 0.4, 1.2] },"
	        "  \"effects\": { \"supersample\": 2, \"blur_samples\": %d, \"exposure_s\": 0.1 },"
	        "  \"robots\": [ { \"marker\": { \"type\": \"tag\", \"tag_id\": 1 },"
	        "     \"path\": { \"start_m\": [0.5, 0.4], \"speed_mps\": 0.5 } } ] }";
	char text[1024];
	wl_synth_scene sb, s1;
	wl_synth_renderer *rb = NULL, *r1 = NULL;
	wl_err err = {0};
	size_t n = (size_t)320 * 240 * 3;
	uint8_t *blur = malloc(n), *one = malloc(n);
	double *mean = calloc(n, sizeof *mean), t = 0.2, worst = 0;
	long changed = 0;
	(void)state;
	snprintf(text, sizeof text, base, 4);
	load(text, &sb);
	snprintf(text, sizeof text, base, 1);
	load(text, &s1);
	assert_int_equal(wl_synth_renderer_create(&sb, 2, &rb, &err), WL_OK);
	assert_int_equal(wl_synth_renderer_create(&s1, 2, &r1, &err), WL_OK);
	render_rgb(rb, &sb, t, 0, blur);
	for (int j = 0; j < 4; j++) {
		render_rgb(r1, &s1, t + 0.1 * ((j + 0.5) / 4 - 0.5), 0, one);
		for (size_t i = 0; i < n; i++)
			mean[i] += one[i] / 4.0;
	}
	render_rgb(r1, &s1, t, 0, one);
	for (size_t i = 0; i < n; i++) {
		worst = fmax(worst, fabs(blur[i] - mean[i]));
		changed += blur[i] != one[i];
	}
	assert_true(worst <= 1.0);  /* one level of rounding per render */
	assert_true(changed > 300); /* 5 cm of motion in the exposure: a visible smear */
	wl_synth_renderer_destroy(rb);
	wl_synth_renderer_destroy(r1);
	free(blur);
	free(one);
	free(mean);
}

/* Glare spots drift at glare_speed_pxps. */
static void test_glare_drift(void **state)
{
	static const char text[] =
	        "{ \"seed\": 5, \"tank\": { \"size_m\": [4, 4], \"floor_rgb\": [100, 100, 100] },"
	        "  \"camera\": { \"width_px\": 640, \"height_px\": 480, \"hfov_deg\": 40, \"position_m\": "
	        "[2, 2, 2] },"
	        "  \"effects\": { \"glare_count\": 1, \"glare_radius_px\": 20, \"glare_gain\": 100, "
	        "\"glare_speed_pxps\": 30 } }";
	wl_synth_scene sc;
	wl_synth_renderer *r = NULL;
	wl_err err = {0};
	size_t n = (size_t)640 * 480 * 3;
	uint8_t *a = malloc(n);
	double cu[2], cv[2], peak = 0;
	(void)state;
	load(text, &sc);
	assert_int_equal(wl_synth_renderer_create(&sc, 2, &r, &err), WL_OK);
	for (int f = 0; f < 2; f++) {
		double sw = 0, su = 0, sv = 0;
		render_rgb(r, &sc, f * 1.0, f, a);
		for (int v = 0; v < 480; v++)
			for (int u = 0; u < 640; u++) {
				double e = a[((size_t)v * 640 + u) * 3] - 100.0;
				peak = fmax(peak, e);
				sw += e;
				su += e * u;
				sv += e * v;
			}
		assert_true(sw > 0);
		cu[f] = su / sw;
		cv[f] = sv / sw;
	}
	printf("glare: peak %.1f, centroids (%.1f, %.1f) -> (%.1f, %.1f)\n", peak, cu[0], cv[0], cu[1],
	       cv[1]);
	assert_true(peak >= 95 && peak <= 100);
	/* 1 s at 30 px/s (the spot is whole inside the image in both frames for
	 * this seed; a clipped spot would bias the centroid) */
	assert_float_equal(hypot(cu[1] - cu[0], cv[1] - cv[0]), 30.0, 0.5);
	wl_synth_renderer_destroy(r);
	free(a);
}

/* ---- what real water and phones add (hazard.c, docks) ---- */

/* Rolling shutter: each coded row of a frame equals that row of a global
 * shutter frame rendered at the row's own time (t + v / h * readout); and
 * AprilTag's detector (outside the project) finds the moving tag where the
 * truth puts it at wl_synth_centre_time, not at the frame time. */
static void test_rolling_shutter(void **state)
{
	static const char base[] =
	        "{ \"tank\": { \"size_m\": [1.2, 0.8] },"
	        "  \"camera\": { \"width_px\": 320, \"height_px\": 240, \"hfov_deg\": 60, \"position_m\": "
	        "[0.6, 0.4, 1.2] },"
	        "  \"timing\": { \"fps\": 30, \"readout_ms\": %g },"
	        "  \"effects\": { \"supersample\": 2 },"
	        "  \"robots\": [ { \"height_m\": 0.1, \"marker\": { \"type\": \"tag\", \"tag_id\": 4, "
	        "\"size_m\": 0.08 },"
	        "     \"path\": { \"start_m\": [0.3, 0.4], \"heading_deg\": 0, \"speed_mps\": 1.0 } } ] }";
	char text[1024];
	wl_synth_scene rs, gs;
	wl_synth_renderer *rr = NULL, *rg = NULL;
	wl_err err = {0};
	int w = 320, h = 240, rows_checked = 0;
	uint8_t *a = malloc((size_t)w * h * 3), *b = malloc((size_t)w * h * 3), *y = malloc((size_t)w * h);
	double t = 0.3, R = 0.025, tc, X[3], u, v, u0, v0, worst = 0;
	apriltag_family_t *tf = tag36h11_create();
	apriltag_detector_t *td = make_detector(tf);
	wl_synth_pose p;
	(void)state;
	snprintf(text, sizeof text, base, R * 1000);
	load(text, &rs);
	snprintf(text, sizeof text, base, 0.0);
	load(text, &gs);
	assert_int_equal(wl_synth_renderer_create(&rs, 2, &rr, &err), WL_OK);
	assert_int_equal(wl_synth_renderer_create(&gs, 2, &rg, &err), WL_OK);
	render_rgb(rr, &rs, t, 0, a);
	for (int v = 60; v < 180; v += 13) {
		render_rgb(rg, &gs, t + R * v / h, 0, b);
		for (int k = 0; k < 3 * w; k++)
			worst = fmax(worst,
			             fabs((double)a[(size_t)v * 3 * w + k] - b[(size_t)v * 3 * w + k]));
		rows_checked++;
	}
	printf("rolling shutter: %d rows equal the global frame at their own time within %.0f levels\n",
	       rows_checked, worst);
	assert_true(worst <= 1.0);
	/* the detector's centre against the truth at the centre row's time */
	for (int i = 0; i < w * h; i++)
		y[i] = (uint8_t)lround(0.299 * a[3 * i] + 0.587 * a[3 * i + 1] + 0.114 * a[3 * i + 2]);
	zarray_t *dets = detect(td, y, w, h);
	assert_int_equal(zarray_size(dets), 1);
	apriltag_detection_t *d;
	zarray_get(dets, 0, &d);
	tc = wl_synth_centre_time(&rs, 0, t);
	wl_synth_robot_pose(&rs, 0, tc, &p);
	X[0] = p.x_m;
	X[1] = p.y_m;
	X[2] = 0.1;
	wl_camera_project(&rs.cam, X, &u, &v);
	assert_float_equal(tc, t + v / h * R, 1e-6);
	wl_synth_robot_pose(&rs, 0, t, &p);
	X[0] = p.x_m;
	X[1] = p.y_m;
	wl_camera_project(&rs.cam, X, &u0, &v0);
	printf("rolling shutter: centre row time +%.2f ms; detection %.2f px from the truth then, %.2f px "
	       "from "
	       "the frame-time truth\n",
	       1000 * (tc - t), hypot(d->c[0] - 0.5 - u, d->c[1] - 0.5 - v),
	       hypot(d->c[0] - 0.5 - u0, d->c[1] - 0.5 - v0));
	assert_true(hypot(d->c[0] - 0.5 - u, d->c[1] - 0.5 - v) <= 0.3);
	assert_true(hypot(d->c[0] - 0.5 - u0, d->c[1] - 0.5 - v0) >= 2.0);
	apriltag_detections_destroy(dets);
	apriltag_detector_destroy(td);
	tag36h11_destroy(tf);
	wl_synth_renderer_destroy(rr);
	wl_synth_renderer_destroy(rg);
	free(a);
	free(b);
	free(y);
}

/* An occluder crossing a resting tag: its colour where it covers the tag,
 * and the visible fraction of the tag 1, about 1/2 and 0 as it slides over;
 * a robot with an occlusion interval is 0; a tag half out of the image 1/2. */
static void test_occluder_visibility(void **state)
{
	static const char text[] =
	        "{ \"tank\": { \"size_m\": [1.2, 0.8], \"floor_rgb\": [200, 200, 200] },"
	        "  \"camera\": { \"width_px\": 320, \"height_px\": 240, \"hfov_deg\": 60, \"position_m\": "
	        "[0.6, 0.4, 1.2] },"
	        "  \"effects\": { \"supersample\": 2 },"
	        "  \"robots\": [ { \"height_m\": 0.1, \"marker\": { \"type\": \"tag\", \"tag_id\": 4, "
	        "\"size_m\": 0.08 },"
	        "     \"path\": { \"start_m\": [0.6, 0.4], \"speed_mps\": 0 }, \"occlusions\": [ [5, 6] ] } "
	        "],"
	        "  \"occluders\": [ { \"shape\": \"rect\", \"size_m\": [0.2, 0.3], \"height_m\": 0.3,"
	        "     \"rgb\": [10, 200, 10], \"start_m\": [0.3, 0.4], \"velocity_mps\": [0.1, 0], \"t0_s\": "
	        "0, \"t1_s\": 4 } ] }";
	wl_synth_scene sc;
	wl_synth_renderer *r = NULL;
	wl_err err = {0};
	uint8_t *rgb = malloc((size_t)320 * 240 * 3);
	double f0, fh, f1, fo, X[3] = {0.6, 0.4, 0.1}, u, v;
	(void)state;
	load(text, &sc);
	/* the rect's right edge is at x = 0.4 + 0.1 t on its plane (0.3 m); the
	 * camera is straight above the tag centre (x = 0.6), so the edge crosses
	 * the centre's line of sight at t = 2 s: half the tag is hidden then */
	f0 = wl_synth_visible_fraction(&sc, 0, 0.5);
	fh = wl_synth_visible_fraction(&sc, 0, 2.0);
	f1 = wl_synth_visible_fraction(&sc, 0, 3.0);
	fo = wl_synth_visible_fraction(&sc, 0, 5.5);
	printf("visible fraction: %.3f before, %.3f half-way, %.3f covered, %.3f hidden\n", f0, fh, f1, fo);
	assert_float_equal(f0, 1.0, 1e-9);
	assert_float_equal(f1, 0.0, 1e-9);
	assert_float_equal(fo, 0.0, 1e-9);
	assert_float_equal(fh, 0.5, 0.01);
	assert_int_equal(wl_synth_renderer_create(&sc, 2, &r, &err), WL_OK);
	render_rgb(r, &sc, 3.0, 0, rgb);
	wl_camera_project(&sc.cam, X, &u, &v);
	assert_memory_equal(px(&sc, rgb, u, v), ((uint8_t[]){10, 200, 10}), 3);
	render_rgb(r, &sc, 4.5, 0, rgb); /* gone after t1_s */
	assert_true(px(&sc, rgb, u, v)[1] != 200);
	wl_synth_renderer_destroy(r);
	free(rgb);
	/* half the tag beyond the image's left edge */
	{
		static const char edge[] =
		        "{ \"tank\": { \"size_m\": [1.2, 0.8] },"
		        "  \"camera\": { \"width_px\": 320, \"height_px\": 240, \"hfov_deg\": 60, "
		        "\"position_m\": "
		        "[0.6, 0.4, 1.2] },"
		        "  \"robots\": [ { \"height_m\": 0.1, \"marker\": { \"type\": \"tag\", \"tag_id\": "
		        "4, \"size_m\": "
		        "0.08 }, \"path\": { \"start_m\": [0.0, 0.4], \"speed_mps\": 0 } } ] }";
		wl_synth_scene se;
		double Xe[3], ue, ve, fe;
		load(edge, &se);
		/* put the tag centre on the image's left edge */
		wl_camera_pixel_to_plane_water(&se.cam, 0.0, 119.5, 0.1, &Xe[0], &Xe[1]);
		se.robots[0].path.x0_m = Xe[0];
		se.robots[0].path.y0_m = Xe[1];
		Xe[2] = 0.1;
		wl_camera_project(&se.cam, Xe, &ue, &ve);
		fe = wl_synth_visible_fraction(&se, 0, 0);
		printf("visible fraction at the image edge: %.3f (centre at u = %.2f)\n", fe, ue);
		assert_float_equal(fe, 0.5, 0.05);
	}
}

/* An aimed glare spot moves with its robot and sweeps across it once per
 * repeat_s: its centre (the centroid of the brightness it adds, no pixel
 * clipped at this gain) is at the robot's projected centre + start +
 * velocity * ((t - t0) mod repeat). */
static void test_aimed_spot(void **state)
{
	static const char base[] =
	        "{ \"tank\": { \"size_m\": [1.2, 0.8], \"floor_rgb\": [100, 100, 100] },"
	        "  \"camera\": { \"width_px\": 320, \"height_px\": 240, \"hfov_deg\": 60, \"position_m\": "
	        "[0.6, 0.4, 1.2] },"
	        "  \"robots\": [ { \"id\": 7, \"height_m\": 0.1, \"marker\": { \"type\": \"tag\", "
	        "\"tag_id\": 4, "
	        "\"size_m\": 0.08 },"
	        "     \"path\": { \"start_m\": [0.4, 0.4], \"speed_mps\": 0.1 } } ]%s }";
	char text[1200];
	wl_synth_scene s0, s1;
	wl_synth_renderer *r0 = NULL, *r1 = NULL;
	wl_err err = {0};
	uint8_t *a = malloc((size_t)320 * 240 * 3), *b = malloc((size_t)320 * 240 * 3);
	(void)state;
	snprintf(text, sizeof text, base, "");
	load(text, &s0);
	snprintf(text, sizeof text, base,
	         ", \"glare_spots\": [ { \"robot\": 7, \"start_px\": [-40, 5], \"velocity_pxps\": [80, 0],"
	         " \"t0_s\": 0.2, \"repeat_s\": 1, \"radius_px\": 12, \"gain\": 10 } ]");
	load(text, &s1);
	assert_int_equal(s1.n_spots, 1);
	assert_int_equal(wl_synth_renderer_create(&s0, 2, &r0, &err), WL_OK);
	assert_int_equal(wl_synth_renderer_create(&s1, 2, &r1, &err), WL_OK);
	for (int k = 0; k < 2; k++) {
		double t = 0.45 + k * 1.0, sw = 0, su = 0, sv = 0, X[3], u, v;
		wl_synth_pose p;
		render_rgb(r0, &s0, t, 0, a);
		render_rgb(r1, &s1, t, 0, b);
		for (int y = 0; y < 240; y++)
			for (int x = 0; x < 320; x++) {
				double e =
				        (double)b[((size_t)y * 320 + x) * 3] - a[((size_t)y * 320 + x) * 3];
				sw += e;
				su += e * x;
				sv += e * y;
			}
		wl_synth_robot_pose(&s1, 0, t, &p);
		X[0] = p.x_m;
		X[1] = p.y_m;
		X[2] = 0.1;
		wl_camera_project(&s1.cam, X, &u, &v);
		printf("aimed spot at t = %.2f: centroid (%.2f, %.2f), expected (%.2f, %.2f)\n", t, su / sw,
		       sv / sw, u - 40 + 80 * 0.25, v + 5);
		/* rounding each pixel to whole levels moves the centroid a little */
		assert_float_equal(su / sw, u - 40 + 80 * 0.25, 0.3);
		assert_float_equal(sv / sw, v + 5, 0.3);
	}
	wl_synth_renderer_destroy(r0);
	wl_synth_renderer_destroy(r1);
	free(a);
	free(b);
}

/* Docking: inside [t0, t1] the robot rides beside its leader at the given
 * offset in the leader's axes; outside [t0 - blend, t1 + blend] it is on its
 * own path; the motion stays continuous (no jump between close times). */
static void test_docks(void **state)
{
	static const char text[] =
	        "{ \"tank\": { \"size_m\": [2, 2] }, \"camera\": {},"
	        "  \"robots\": [ { \"id\": 1, \"marker\": { \"type\": \"tag\", \"tag_id\": 1 },"
	        "     \"path\": { \"start_m\": [0.5, 1.0], \"heading_deg\": 30, \"speed_mps\": 0.2, "
	        "\"curvature_1pm\": 1 } },"
	        "   { \"id\": 2, \"marker\": { \"type\": \"tag\", \"tag_id\": 2 },"
	        "     \"path\": { \"start_m\": [0.5, 0.6], \"heading_deg\": 90, \"speed_mps\": 0.1 },"
	        "     \"docks\": [ { \"with\": 1, \"offset_m\": [0, -0.12], \"t0_s\": 2, \"t1_s\": 4, "
	        "\"blend_s\": 1 } ] } ] }";
	wl_synth_scene sc;
	wl_synth_pose a, b, own, prev;
	double worst = 0;
	(void)state;
	load(text, &sc);
	assert_int_equal(sc.robots[1].n_docks, 1);
	assert_int_equal(sc.robots[1].docks[0].with, 0);
	wl_synth_robot_pose(&sc, 0, 3.0, &a);
	wl_synth_robot_pose(&sc, 1, 3.0, &b);
	assert_float_equal(b.x_m, a.x_m + 0.12 * sin(a.heading_rad), 1e-9);
	assert_float_equal(b.y_m, a.y_m - 0.12 * cos(a.heading_rad), 1e-9);
	assert_float_equal(b.heading_rad, a.heading_rad, 1e-9);
	wl_synth_robot_pose(&sc, 1, 0.9, &b);
	assert_float_equal(b.x_m, 0.5, 1e-9);
	assert_float_equal(b.y_m, 0.6 + 0.09, 1e-9);
	/* a jump would keep its size however small the step: the largest step
	 * must shrink in proportion (a speed, here below 1.5 m/s while blending
	 * from 0.6 m away over 1 s) */
	for (int pass = 0; pass < 2; pass++) {
		double dt = pass ? 1e-5 : 1e-3;
		worst = 0;
		wl_synth_robot_pose(&sc, 1, 0, &prev);
		for (long k = 1; k * dt <= 6.0; k++) {
			wl_synth_robot_pose(&sc, 1, k * dt, &own);
			worst = fmax(worst, hypot(own.x_m - prev.x_m, own.y_m - prev.y_m));
			prev = own;
		}
		printf("docking: largest step in %g s: %.4f mm (%.3f m/s)\n", dt, 1000 * worst, worst / dt);
		assert_true(worst / dt < 1.5);
	}
	check_bad("{ \"tank\": { \"size_m\": [1, 1] }, \"camera\": {}, \"robots\": [ { \"marker\": { "
	          "\"type\": \"tag\","
	          " \"tag_id\": 1 }, \"docks\": [ { \"with\": 9, \"t0_s\": 1, \"t1_s\": 2 } ] } ] }",
	          "robots[0].docks[0]: key 'with' names no robot id");
	check_bad(
	        "{ \"tank\": { \"size_m\": [1, 1] }, \"camera\": {}, \"occluders\": [ { \"shape\": \"star\","
	        " \"size_m\": [0.1, 0.1], \"start_m\": [0, 0] } ] }",
	        "occluders[0]: key 'shape' must be");
	check_bad("{ \"tank\": { \"size_m\": [1, 1] }, \"camera\": {}, \"glare_spots\": [ { \"radius\": 3 } "
	          "] }",
	          "glare_spots[0]: key 'radius' is not known");
	check_bad("{ \"tank\": { \"size_m\": [1, 1] }, \"camera\": {}, \"timing\": { \"fps\": 30, "
	          "\"readout_ms\": 40 } }",
	          "timing: key 'readout_ms' is not shorter than a frame interval");
}

/* The renderer takes up to 32 robots (a swarm), and says so beyond. */
static void test_many_robots(void **state)
{
	char text[8192];
	size_t n;
	wl_synth_scene sc;
	(void)state;
	for (int count = 24; count <= 33; count += 9) {
		n = (size_t)snprintf(text, sizeof text,
		                     "{ \"tank\": { \"size_m\": [3, 3] }, \"camera\": {}, \"robots\": [");
		for (int i = 0; i < count; i++)
			n += (size_t)snprintf(text + n, sizeof text - n,
			                      "%s{ \"marker\": { \"type\": \"tag\", \"tag_id\": %d }, "
			                      "\"path\": { \"start_m\": [%g, 1] } }",
			                      i ? "," : "", i, 0.1 * i);
		snprintf(text + n, sizeof text - n, "] }");
		if (count <= WL_SYNTH_MAX_ROBOTS) {
			load(text, &sc);
			assert_int_equal(sc.n_robots, count);
		} else {
			check_bad(text, "more than 32 robots");
		}
	}
}

/* The whole chain: render, encode (B-frames, jittered times), decode with
 * Debian's ffmpeg (the reference decoder), detect: every frame comes back
 * in order and the tag centre is within 0.5 px of the projected truth. */
static void test_clip_decoded_by_ffmpeg(void **state)
{
	static const char text[] =
	        "{ \"seed\": 2, \"tank\": { \"size_m\": [1.2, 0.8] },"
	        "  \"camera\": { \"width_px\": 640, \"height_px\": 480, \"hfov_deg\": 60, \"k1\": -0.05,"
	        "               \"position_m\": [0.6, 0.4, 1.2] },"
	        "  \"timing\": { \"fps\": 20, \"duration_s\": 1.5, \"jitter\": 0.5 },"
	        "  \"encoding\": { \"b_frames\": 3, \"crf\": 20 },"
	        "  \"effects\": { \"supersample\": 3, \"noise_sigma\": 2 },"
	        "  \"robots\": [ { \"id\": 6, \"height_m\": 0.1, \"marker\": { \"type\": \"tag\", "
	        "\"tag_id\": 6, \"size_m\": 0.07 },"
	        "     \"path\": { \"start_m\": [0.6, 0.25], \"speed_mps\": 0.3, \"curvature_1pm\": 4,"
	        "                 \"yaw_osc_deg\": 20, \"yaw_osc_hz\": 2 } } ] }";
	wl_synth_scene sc;
	wl_err err = {0};
	char dir[128], path[256], cmd[600];
	apriltag_family_t *tf = tag36h11_create();
	apriltag_detector_t *td = make_detector(tf);
	int w = 640, h = 480;
	uint8_t *y = malloc((size_t)w * h);
	double worst = 0;
	long k = 0;
	FILE *fp;
	(void)state;
	load(text, &sc);
	snprintf(dir, sizeof dir, "/tmp/wl-test-synth-%ld", (long)getpid());
	snprintf(cmd, sizeof cmd, "mkdir -p '%s'", dir);
	assert_int_equal(system(cmd), 0);
	snprintf(path, sizeof path, "%s/clip.mp4", dir);
	if (wl_synth_write_clip(&sc, path, NULL, NULL, &err))
		fprintf(stderr, "%s\n", err.msg);
	assert_int_equal(err.code, WL_OK);
	snprintf(cmd, sizeof cmd, "ffmpeg -v error -i '%s' -fps_mode passthrough -f rawvideo -pix_fmt gray -",
	         path);
	fp = popen(cmd, "r");
	assert_non_null(fp);
	while (fread(y, 1, (size_t)w * h, fp) == (size_t)w * h) {
		wl_synth_pose p;
		double X[3], u, v;
		zarray_t *dets = detect(td, y, w, h);
		wl_synth_robot_pose(&sc, 0, wl_synth_frame_time(&sc, k), &p);
		X[0] = p.x_m;
		X[1] = p.y_m;
		X[2] = 0.1;
		wl_camera_project(&sc.cam, X, &u, &v);
		assert_int_equal(zarray_size(dets), 1);
		apriltag_detection_t *d;
		zarray_get(dets, 0, &d);
		assert_int_equal(d->id, 6);
		double e = hypot(d->c[0] - 0.5 - u, d->c[1] - 0.5 - v);
		worst = fmax(worst, e);
		assert_true(e <= 0.5);
		apriltag_detections_destroy(dets);
		k++;
	}
	assert_int_equal(pclose(fp), 0);
	assert_int_equal(k, wl_synth_frame_count(&sc));
	printf("encoded round trip: %ld frames, worst centre error %.3f px\n", k, worst);
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
	assert_int_equal(system(cmd), 0);
	free(y);
	apriltag_detector_destroy(td);
	tag36h11_destroy(tf);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_texture_matches_apriltag),
	        cmocka_unit_test(test_round_trip_detection),
	        cmocka_unit_test(test_round_trip_water),
	        cmocka_unit_test(test_raised_marker_and_move),
	        cmocka_unit_test(test_handedness),
	        cmocka_unit_test(test_path_model),
	        cmocka_unit_test(test_vfr_times),
	        cmocka_unit_test(test_bad_scenes),
	        cmocka_unit_test(test_caps_and_occlusion),
	        cmocka_unit_test(test_noise),
	        cmocka_unit_test(test_clip_decoded_by_ffmpeg),
	        cmocka_unit_test(test_motion_blur),
	        cmocka_unit_test(test_glare_drift),
	        cmocka_unit_test(test_rolling_shutter),
	        cmocka_unit_test(test_occluder_visibility),
	        cmocka_unit_test(test_aimed_spot),
	        cmocka_unit_test(test_docks),
	        cmocka_unit_test(test_many_robots),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
