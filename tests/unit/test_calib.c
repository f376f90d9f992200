/*
 * test_calib.c: the calibration stage: homography (Heckbert's four-point
 * case, noisy synthetic cases), refraction, focal and pose recovery from
 * synthetic projections, outliers, degenerate input, plane heights, water,
 * and CAL.json round trips and validation.
 */
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
#include "core/linalg.h"

#define DEG (3.14159265358979323846 / 180)

/* ---- helpers ---- */

/* Deterministic Gaussian noise (Box-Muller over a 64-bit LCG). */
static double gauss(uint64_t *s) __attribute__((unused));
static double gauss(uint64_t *s)
{
	double u1, u2;
	*s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
	u1 = ((*s >> 11) + 0.5) / 9007199254740992.0;
	*s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
	u2 = ((*s >> 11) + 0.5) / 9007199254740992.0;
	return sqrt(-2 * log(u1)) * cos(2 * 3.14159265358979323846 * u2);
}

static char tmpdir[256];

static int setup_tmp(void **state)
{
	(void)state;
	snprintf(tmpdir, sizeof tmpdir, "/tmp/test_calib.%d", (int)getpid());
	return wl_mkdirs(tmpdir, NULL) == WL_OK ? 0 : -1;
}

static void tmp_path(char *buf, size_t n, const char *name)
{
	snprintf(buf, n, "%s/%s", tmpdir, name);
}

/* A camera 2 m over the tank centre region, tilted by tilt_deg, 1920x1080. */
static void make_camera(wl_camera *cam, double tilt_deg, double f_px)
{
	double eye[3] = { 1.2, 0.6 - 2.0 * tan(tilt_deg * DEG), 2.0 }, target[3] = { 1.2, 0.6, 0 };
	wl_camera_init(cam, 1920, 1080, f_px, f_px, 959.5, 539.5);
	assert_true(wl_camera_look_at(cam, eye, target, 0));
}

/* ---- Heckbert's four-point case ---- */

static void test_heckbert_unit_square(void **state)
{
	/* Heckbert (1989), closed-form square -> quadrilateral; values
	 * recomputed with cv2.getPerspectiveTransform (REFERENCES.md). */
	const double src[8] = { 0, 0, 1, 0, 1, 1, 0, 1 };
	const double dst[8] = { 100, 100, 500, 120, 450, 400, 80, 350 };
	const double want[9] = { 340.62205467, -14.79736098, 100, 5.7492931197, 272.76154571, 100,
				 -0.11875589067, 0.065032987747, 1 };
	double H[9], u, v;
	wl_err err;
	(void)state;
	assert_int_equal(wl_homography_dlt(src, dst, 4, H, &err), WL_OK);
	for (int i = 0; i < 9; i++)
		assert_true(fabs(H[i] - want[i]) < 1e-9 * fmax(1, fabs(want[i])) + 1e-8);
	wl_homography_refine(src, dst, 4, H);
	for (int i = 0; i < 9; i++)
		assert_true(fabs(H[i] - want[i]) < 1e-9 * fmax(1, fabs(want[i])) + 1e-8);
	assert_true(wl_homography_apply(H, 0.5, 0.5, &u, &v));
	assert_true(fabs(u - 270.1694915) < 1e-6);
	assert_true(fabs(v - 245.8595642) < 1e-6);
}

/* ---- CAL.json ---- */

static void fill_calib(wl_calib *cal)
{
	wl_calib_init(cal);
	make_camera(&cal->cam, 20, 1400);
	cal->cam.dist[0] = -0.05;
	cal->plane_height_m = 0.25;
	cal->rms_px = 0.4;
	cal->rms_mm = 0.7;
	cal->n_outline = 4;
	double o[4][2] = { { 0, 0 }, { 2.4, 0 }, { 2.4, 1.2 }, { 0, 1.2 } };
	memcpy(cal->outline_m, o, sizeof o);
	snprintf(cal->intrinsics_source, sizeof cal->intrinsics_source, "homography");
	snprintf(cal->source, sizeof cal->source, "tank.png");
	cal->n_points = 1;
	snprintf(cal->points[0].id, sizeof cal->points[0].id, "3");
	cal->points[0].u_px = 100;
	cal->points[0].v_px = 200;
	cal->points[0].x_m = 0.5;
	cal->points[0].residual_px = 0.25;
	cal->points[0].residual_mm = NAN;
	cal->points[0].used = 1;
}

static void test_calfile_roundtrip(void **state)
{
	wl_calib a, b;
	wl_err err;
	char path[300];
	double x0, y0, x1, y1;
	(void)state;
	tmp_path(path, sizeof path, "CAL.json");
	fill_calib(&a);
	assert_int_equal(wl_calib_save(path, &a, &err), WL_OK);
	assert_int_equal(wl_calib_load(path, &b, &err), WL_OK);
	assert_int_equal(b.cam.width_px, 1920);
	assert_int_equal(b.n_outline, 4);
	assert_int_equal(b.n_points, 1);
	assert_string_equal(b.points[0].id, "3");
	assert_string_equal(b.intrinsics_source, "homography");
	for (int i = 0; i < 9; i++) {
		assert_true(fabs(a.cam.K[i] - b.cam.K[i]) < 1e-12);
		assert_true(fabs(a.cam.R[i] - b.cam.R[i]) < 1e-15);
	}
	assert_true(fabs(b.plane_height_m - 0.25) < 1e-15);
	assert_true(wl_calib_pixel_to_plane(&a, 700, 300, 0.25, &x0, &y0));
	assert_true(wl_calib_pixel_to_plane(&b, 700, 300, 0.25, &x1, &y1));
	assert_true(fabs(x0 - x1) < 1e-12 && fabs(y0 - y1) < 1e-12);
	assert_int_equal(wl_calib_check_clip(&b, path, 1920, 1080, 0, &err), WL_OK);
	assert_int_equal(wl_calib_check_clip(&b, path, 1080, 1920, 1, &err), WL_ECALIB);
	assert_non_null(strstr(err.msg, "1920x1080"));
	assert_non_null(strstr(err.msg, "1080x1920"));
	wl_calib_release(&b);
}

/* Loading names the file and the key that is wrong. */
static void test_calfile_validation(void **state)
{
	static const struct {
		const char *from, *to, *key;
	} cases[] = {
		{ "\"pixels\":\t\"coded\"", "\"pixels\": \"sideways\"", "'pixels'" },
		{ "\"image_size_px\"", "\"image_size\"", "'image_size_px'" },
		{ "\"camera_matrix\"", "\"cam_matrix\"", "'camera_matrix'" },
		{ "\"distortion\"", "\"distortions\"", "'distortion'" },
		{ "\"camera_position_m\":\t[", "\"camera_position_m\": [5, ", "'camera_position_m'" },
		{ "\"tank_outline_m\"", "\"outline\"", "'tank_outline_m'" },
		{ "\"plane_height_m\"", "\"plane_height\"", "'plane_height_m'" },
	};
	wl_calib a, b;
	wl_err err;
	char path[300], bad[300], *text;
	size_t len;
	(void)state;
	tmp_path(path, sizeof path, "good.json");
	tmp_path(bad, sizeof bad, "bad.json");
	fill_calib(&a);
	assert_int_equal(wl_calib_save(path, &a, &err), WL_OK);
	assert_int_equal(wl_read_file(path, 1 << 20, &text, &len, &err), WL_OK);
	for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
		char *at = strstr(text, cases[c].from), *out;
		size_t fl = strlen(cases[c].from), tl = strlen(cases[c].to);
		assert_non_null(at);
		out = malloc(len + tl + 1);
		memcpy(out, text, (size_t)(at - text));
		memcpy(out + (at - text), cases[c].to, tl);
		strcpy(out + (at - text) + tl, at + fl);
		assert_int_equal(wl_write_file_atomic(bad, out, strlen(out), &err), WL_OK);
		free(out);
		assert_int_not_equal(wl_calib_load(bad, &b, &err), WL_OK);
		assert_non_null(strstr(err.msg, bad));
		assert_non_null(strstr(err.msg, cases[c].key));
	}
	free(text);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_heckbert_unit_square),
		cmocka_unit_test(test_calfile_roundtrip),
		cmocka_unit_test(test_calfile_validation),
	};
	return cmocka_run_group_tests(tests, setup_tmp, NULL);
}
