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

#include <apriltag.h>
#include <common/image_u8.h>
#include <tag36h11.h>

#include "calib/calib.h"
#include "calib/detect.h"
#include "calib/lens.h"
#include "core/afile.h"
#include "core/linalg.h"

#define DEG (3.14159265358979323846 / 180)

/* ---- helpers ---- */

/* Deterministic Gaussian noise (Box-Muller over a 64-bit LCG). */
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
	double eye[3] = {1.2, 0.6 - 2.0 * tan(tilt_deg * DEG), 2.0}, target[3] = {1.2, 0.6, 0};
	wl_camera_init(cam, 1920, 1080, f_px, f_px, 959.5, 539.5);
	assert_true(wl_camera_look_at(cam, eye, target, 0));
}

/* ---- Heckbert's four-point case ---- */

static void test_heckbert_unit_square(void **state)
{
	/* Heckbert (1989), closed-form square -> quadrilateral; values
	 * recomputed with cv2.getPerspectiveTransform (tests/data/references.md). */
	const double src[8] = {0, 0, 1, 0, 1, 1, 0, 1};
	const double dst[8] = {100, 100, 500, 120, 450, 400, 80, 350};
	const double want[9] = {340.62205467,   -14.79736098,   100, 5.7492931197, 272.76154571, 100,
	                        -0.11875589067, 0.065032987747, 1};
	double H[9], u, v;
	wl_err err;
	(void)state;
	assert_int_equal(wl_homography_dlt(src, dst, 4, H, &err), WL_OK);
	for (int i = 0; i < 9; i++)
		assert_true(fabs(H[i] - want[i]) <= 1e-9 * fabs(want[i]) || fabs(H[i] - want[i]) < 1e-12);
	wl_homography_refine(src, dst, 4, H);
	for (int i = 0; i < 9; i++)
		assert_true(fabs(H[i] - want[i]) <= 1e-9 * fabs(want[i]) || fabs(H[i] - want[i]) < 1e-12);
	assert_true(wl_homography_apply(H, 0.5, 0.5, &u, &v));
	assert_true(fabs(u - 270.1694915) < 1e-7); /* printed to 7 decimals */
	assert_true(fabs(v - 245.8595642) < 1e-7);
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
	double o[4][2] = {{0, 0}, {2.4, 0}, {2.4, 1.2}, {0, 1.2}};
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
	        {"\"pixels\":\t\"coded\"", "\"pixels\": \"sideways\"", "'pixels'"},
	        {"\"image_size_px\"", "\"image_size\"", "'image_size_px'"},
	        {"\"camera_matrix\"", "\"cam_matrix\"", "'camera_matrix'"},
	        {"\"distortion\"", "\"distortions\"", "'distortion'"},
	        {"\"camera_position_m\":\t[", "\"camera_position_m\": [5, ", "'camera_position_m'"},
	        {"\"tank_outline_m\"", "\"outline\"", "'tank_outline_m'"},
	        {"\"plane_height_m\"", "\"plane_height\"", "'plane_height_m'"},
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

/* ---- refraction ---- */

static void test_refraction_worked_example(void **state)
{
	/* tests/data/references.md, "Refraction at a flat water surface", worked example: camera 2.0 m above
	 * the surface, ray 20 deg off nadir, marker 0.30 m deep -> 0.80758 m from nadir; ignoring refraction
	 * 0.83713 m. */
	double n = 1.333, s_air = 2.0 * tan(20 * DEG);
	double sin_w = sin(20 * DEG) / n, r = s_air + 0.30 * sin_w / sqrt(1 - sin_w * sin_w);
	double s, u, v, x, y;
	wl_camera cam;
	(void)state;
	assert_true(fabs(r - 0.80758) < 1e-4);
	s = wl_refract_surface_offset(2.0, 0.80758, 0.30, n);
	assert_true(fabs(s - s_air) < 1e-4);
	/* through the camera model: nadir camera at 2.30 m over the floor */
	{
		double eye[3] = {0, 0, 2.30}, target[3] = {0, 0, 0}, X[3] = {0.80758, 0, 0};
		wl_camera_init(&cam, 1920, 1080, 1000, 1000, 959.5, 539.5);
		assert_true(wl_camera_look_at(&cam, eye, target, 0));
		cam.water_depth_m = 0.30;
		cam.water_index = n;
		assert_true(wl_camera_project_water(&cam, X, &u, &v));
		assert_true(fabs(atan(hypot(u - 959.5, v - 539.5) / 1000) - 20 * DEG) < 1e-4 / 2.3);
		assert_true(wl_camera_pixel_to_plane_water(&cam, u, v, 0, &x, &y));
		assert_true(fabs(hypot(x, y) - 0.80758) < 1e-4);
		assert_true(wl_camera_pixel_to_plane(&cam, u, v, 0, &x, &y));
		assert_true(fabs(hypot(x, y) - 0.83713) < 1e-4);
	}
}

/* ---- synthetic scenes ---- */

/* Floor markers on a grid nx × ny over a 2.4 m × 1.2 m tank, projected by
 * cam (through the water model when it has water), with pixel noise. */
static int make_points(const wl_camera *cam, int nx, int ny, double z_m, double noise_px, uint64_t seed,
                       wl_calib_point *pts)
{
	int k = 0;
	for (int j = 0; j < ny; j++)
		for (int i = 0; i < nx; i++) {
			double X[3] = {0.1 + 2.2 * i / (nx - 1), 0.1 + 1.0 * j / (ny - 1), z_m}, u, v;
			wl_calib_point *p = &pts[k];
			memset(p, 0, sizeof *p);
			assert_true(wl_camera_project_water(cam, X, &u, &v));
			snprintf(p->id, sizeof p->id, "%d", k);
			p->u_px = u + noise_px * gauss(&seed);
			p->v_px = v + noise_px * gauss(&seed);
			p->x_m = X[0];
			p->y_m = X[1];
			p->z_m = z_m;
			k++;
		}
	return k;
}

static void default_opts(wl_calib_opts *o)
{
	memset(o, 0, sizeof *o);
	o->width_px = 1920;
	o->height_px = 1080;
	o->water_index = WL_WATER_INDEX;
}

static void test_dlt_synthetic_noise(void **state)
{
	/* Normalised DLT against homographies of known cameras: exact data
	 * gives H to ~1e-9; with 0.5 px noise on 15 points the fitted H maps a
	 * grid within 0.65 px RMS of the truth and the RMS point distance is
	 * near sigma·sqrt(2)·sqrt((2n-8)/2n) (8 parameters; Hartley &
	 * Zisserman, §5.1.3, expected residual of the ML estimate). */
	wl_calib_point pts[64];
	(void)state;
	for (int tilt = 0; tilt <= 40; tilt += 20) {
		for (int noisy = 0; noisy <= 1; noisy++) {
			wl_camera cam;
			double xy[128], uv[128], H[9], rms, err2 = 0, sigma = noisy ? 0.5 : 0;
			int n, m = 0;
			wl_err err;
			make_camera(&cam, tilt, 1400);
			n = make_points(&cam, 5, 3, 0, sigma, 42 + (uint64_t)tilt, pts);
			for (int i = 0; i < n; i++) {
				xy[2 * i] = pts[i].x_m;
				xy[2 * i + 1] = pts[i].y_m;
				uv[2 * i] = pts[i].u_px;
				uv[2 * i + 1] = pts[i].v_px;
			}
			assert_int_equal(wl_homography_dlt(xy, uv, n, H, &err), WL_OK);
			rms = wl_homography_refine(xy, uv, n, H);
			for (double x = 0; x <= 2.4; x += 0.2)
				for (double y = 0; y <= 1.2; y += 0.2) {
					double X[3] = {x, y, 0}, u0, v0, u1, v1;
					assert_true(wl_camera_project(&cam, X, &u0, &v0));
					assert_true(wl_homography_apply(H, x, y, &u1, &v1));
					err2 += (u1 - u0) * (u1 - u0) + (v1 - v0) * (v1 - v0);
					m++;
				}
			err2 = sqrt(err2 / m);
			if (!noisy) {
				assert_true(err2 < 1e-8);
				assert_true(rms < 1e-8);
			} else {
				double expect = sigma * sqrt(2.0) * sqrt((2.0 * n - 8) / (2.0 * n));
				print_message(
				        "tilt %d: grid error %.3f px, residual rms %.3f px (expected %.3f)\n",
				        tilt, err2, rms, expect);
				/* fitted values have a standard error of sigma·sqrt(2·8/2n) = 0.37 px at
				 * the points, more at the tank edges outside them */
				assert_true(err2 < 0.65);
				assert_true(rms > 0.5 * expect && rms < 1.6 * expect);
			}
		}
	}
}

static void test_degenerate_input(void **state)
{
	const double three[6] = {0, 0, 1, 0, 0, 1};
	const double coll4[8] = {0, 0, 1, 0, 2, 0, 0, 1}; /* first three on y = 0 */
	const double line6[12] = {0, 0, 1, 1, 2, 2, 3, 3, 4, 4, 5, 5};
	const double two_lines[12] = {0, 0, 1, 0, 2, 0, 0, 1, 1, 1, 2, 1};
	const double ok5[10] = {0, 0, 1, 0, 1, 1, 0, 1, 0.5, 0.3};
	double H[9];
	wl_err err;
	(void)state;
	assert_int_equal(wl_homography_dlt(three, three, 3, H, &err), WL_ECALIB);
	assert_non_null(strstr(err.msg, "at least 4"));
	assert_int_equal(wl_homography_dlt(coll4, coll4, 4, H, &err), WL_ECALIB);
	assert_non_null(strstr(err.msg, "collinear"));
	assert_non_null(strstr(err.msg, "points 1, 2 and 3"));
	assert_int_equal(wl_homography_check_points(line6, 6, "layout", &err), WL_ECALIB);
	assert_non_null(strstr(err.msg, "one line"));
	assert_int_equal(wl_homography_check_points(two_lines, 6, "layout", &err), WL_OK);
	assert_int_equal(wl_homography_check_points(ok5, 5, "layout", &err), WL_OK);
}

/* Six points, one 40 px off: it is found, named and left out. */
/* A diagnostics hook that looks for a warning naming point '4'. */
static void find_point_4(void *ctx, const char *stage, const char *msg)
{
	int *found = ctx;
	assert_string_equal(stage, "calibrate");
	*found |= strstr(msg, "'4'") != NULL;
}

static void test_outlier_six_points(void **state)
{
	wl_calib_point pts[8];
	wl_calib_opts o;
	wl_calib_report rep;
	static wl_calib cal;
	wl_camera cam;
	wl_err err;
	int n, found = 0;
	(void)state;
	uint64_t seed = 7;
	const double at[6][2] = {{0.1, 0.1}, {1.2, 0.15}, {2.3, 0.1}, {0.15, 1.1}, {1.25, 0.6}, {2.3, 1.05}};
	make_camera(&cam, 20, 1400);
	n = 6;
	for (int i = 0; i < n; i++) {
		double X[3] = {at[i][0], at[i][1], 0};
		memset(&pts[i], 0, sizeof pts[i]);
		snprintf(pts[i].id, sizeof pts[i].id, "%d", i);
		assert_true(wl_camera_project(&cam, X, &pts[i].u_px, &pts[i].v_px));
		pts[i].u_px += 0.2 * gauss(&seed);
		pts[i].v_px += 0.2 * gauss(&seed);
		pts[i].x_m = X[0];
		pts[i].y_m = X[1];
	}
	pts[4].u_px += 40;
	default_opts(&o);
	o.lens = &cam;
	o.diag = &(wl_diag){find_point_4, NULL, &found};
	assert_int_equal(wl_calib_solve(pts, n, &o, &cal, &rep, &err), WL_OK);
	assert_int_equal(rep.outlier, 4);
	assert_true(fabs(rep.outlier_residual_px - 40) < 3);
	assert_int_equal(cal.points[4].used, 0);
	assert_true(found);
	assert_true(cal.rms_px < 0.5);
	assert_true(fabs(rep.height_m - 2.0) < 0.02);
}

static double mapping_error_mm(const wl_calib *cal, const wl_camera *truth, double z_true, double z_map,
                               double *max_mm)
{
	double s = 0;
	int k = 0;
	*max_mm = 0;
	for (double x = 0; x <= 2.4 + 1e-9; x += 0.2)
		for (double y = 0; y <= 1.2 + 1e-9; y += 0.2) {
			double X[3] = {x, y, z_true}, u, v, xm, ym, e;
			assert_true(wl_camera_project_water(truth, X, &u, &v));
			assert_true(wl_calib_pixel_to_plane(cal, u, v, z_map, &xm, &ym));
			e = 1000 * hypot(xm - x, ym - y);
			*max_mm = fmax(*max_mm, e);
			s += e * e;
			k++;
		}
	return sqrt(s / k);
}

/* Camera 2 m up, tilt 15-25 deg, 1920x1080: height within 1 %, tilt
 * within 0.5 deg, plane 0.25 m up mapped within 2 mm over a 2.4 m tank,
 * with the focal length from the homography and with the lens given. */
static void test_pose_recovery(void **state)
{
	wl_calib_point pts[64];
	static wl_calib cal;
	(void)state;
	for (int tilt = 15; tilt <= 25; tilt += 5)
		for (int with_lens = 0; with_lens <= 1; with_lens++) {
			wl_camera cam;
			wl_calib_opts o;
			wl_calib_report rep;
			wl_err err;
			double rms_mm, max_mm, max0_mm;
			int n;
			make_camera(&cam, tilt, 1400);
			n = make_points(&cam, 5, 3, 0, 0.3, 100 + (uint64_t)tilt, pts);
			default_opts(&o);
			o.lens = with_lens ? &cam : NULL;
			o.plane_height_m = 0.25;
			assert_int_equal(wl_calib_solve(pts, n, &o, &cal, &rep, &err), WL_OK);
			assert_string_equal(cal.intrinsics_source, with_lens ? "lens" : "homography");
			assert_true(rep.focal_determined);
			assert_true(fabs(rep.height_m - 2.0) < 0.02);
			assert_true(fabs(rep.tilt_deg - tilt) < 0.5);
			assert_true(cal.rms_px < 0.5);
			rms_mm = mapping_error_mm(&cal, &cam, 0.25, 0.25, &max_mm);
			assert_true(max_mm < 2.0);
			/* without the plane-height correction the error is far larger */
			mapping_error_mm(&cal, &cam, 0.25, 0, &max0_mm);
			assert_true(max0_mm > 20 * max_mm && max0_mm > 30);
			print_message("tilt %d lens %d: f %.1f (true 1400) height %.4f m tilt %.3f deg rms "
			              "%.3f px, "
			              "plane 0.25 m: rms %.3f max %.3f mm; uncorrected max %.1f mm\n",
			              tilt, with_lens, cal.cam.K[0], rep.height_m, rep.tilt_deg, cal.rms_px,
			              rms_mm, max_mm, max0_mm);
		}
}

/* A nadir view cannot give f: the solve says what is needed, and works
 * with --hfov-deg. */
static void test_nadir_needs_intrinsics(void **state)
{
	wl_calib_point pts[64];
	static wl_calib cal;
	wl_camera cam;
	wl_calib_opts o;
	wl_calib_report rep;
	wl_err err;
	int n;
	(void)state;
	make_camera(&cam, 2, 1400);
	n = make_points(&cam, 5, 3, 0, 0.3, 5, pts);
	default_opts(&o);
	assert_int_equal(wl_calib_solve(pts, n, &o, &cal, &rep, &err), WL_ECALIB);
	assert_non_null(strstr(err.msg, "--lens"));
	assert_non_null(strstr(err.msg, "--hfov-deg"));
	o.hfov_deg = 2 * atan(960.0 / 1400) / DEG;
	assert_int_equal(wl_calib_solve(pts, n, &o, &cal, &rep, &err), WL_OK);
	assert_string_equal(cal.intrinsics_source, "hfov");
	assert_true(fabs(rep.height_m - 2.0) < 0.02);
}

/* Floor markers under 0.30 m of water: the camera height comes out within
 * 1 % only when the water depth is given. */
static void test_water_pose(void **state)
{
	wl_calib_point pts[64];
	static wl_calib cal;
	(void)state;
	for (int with_lens = 0; with_lens <= 1; with_lens++) {
		wl_camera cam;
		wl_calib_opts o;
		wl_calib_report rep;
		wl_err err;
		double h_water, h_dry, max_mm;
		int n;
		make_camera(&cam, 20, 1400);
		cam.water_depth_m = 0.30;
		n = make_points(&cam, 5, 3, 0, 0.3, 11, pts);
		default_opts(&o);
		o.lens = with_lens ? &cam : NULL;
		if (with_lens) {
			static wl_camera dry;
			dry = cam;
			dry.water_depth_m = 0;
			o.lens = &dry;
		}
		o.water_depth_m = 0.30;
		assert_int_equal(wl_calib_solve(pts, n, &o, &cal, &rep, &err), WL_OK);
		h_water = rep.height_m;
		assert_true(fabs(h_water - 2.0) < 0.02);
		mapping_error_mm(&cal, &cam, 0, 0, &max_mm);
		assert_true(max_mm < 2.0);
		o.water_depth_m = 0;
		if (wl_calib_solve(pts, n, &o, &cal, &rep, &err) == WL_OK) {
			h_dry = rep.height_m;
			assert_true(fabs(h_dry - 2.0) > 0.02);
		} else {
			h_dry = NAN;
		}
		print_message("water 0.30 m, lens %d: height %.4f m with the water model, %.4f m without\n",
		              with_lens, h_water, h_dry);
	}
}

/* ---- tag detection at the AprilTag boundary ---- */

/* A tag36h11 tag drawn with 20 px cells at a known place: its black square
 * covers pixels 120..279, so in wakeline's convention (pixel centres at
 * integers) the corners lie at 119.5 and 279.5 and the centre at 199.5;
 * AprilTag reports them 0.5 px larger (PITFALLS.md). */
static void test_tag_pixel_convention(void **state)
{
	apriltag_family_t *fam = tag36h11_create();
	image_u8_t *tag = apriltag_to_image(fam, 5);
	enum { W = 400, S = 20, OFF = 100 };
	static uint8_t im[W * W];
	const double want[4][2] = {{119.5, 279.5}, {279.5, 279.5}, {279.5, 119.5}, {119.5, 119.5}};
	wl_calib_tags *t = NULL;
	wl_tag_obs o;
	wl_err err;
	int seen;
	(void)state;
	memset(im, 255, sizeof im);
	for (int y = OFF; y < OFF + S * tag->height; y++)
		for (int x = OFF; x < OFF + S * tag->width; x++)
			im[y * W + x] = tag->buf[((y - OFF) / S) * tag->stride + (x - OFF) / S];
	assert_int_equal(wl_calib_tags_create("tag36h11", &t, &err), WL_OK);
	assert_int_equal(wl_calib_tags_add(t, im, W, W, W, &seen, &err), WL_OK);
	assert_int_equal(seen, 1);
	assert_true(wl_calib_tags_get(t, 5, &o));
	assert_false(wl_calib_tags_get(t, 4, &o));
	assert_true(fabs(o.c[0] - 199.5) < 0.3 && fabs(o.c[1] - 199.5) < 0.3);
	for (int k = 0; k < 4; k++) {
		/* order: bottom-left, bottom-right, top-right, top-left on screen */
		assert_true(fabs(o.p[k][0] - want[k][0]) < 0.3);
		assert_true(fabs(o.p[k][1] - want[k][1]) < 0.3);
	}
	/* the same marker in a layout: corners in that order on the floor */
	{
		wl_calib_marker m = {5, 1.0, 2.0, 0, 0.2, 0, 1};
		double xy[4][2];
		wl_calib_marker_corners(&m, xy);
		assert_true(fabs(xy[0][0] - 0.9) < 1e-12 && fabs(xy[0][1] - 1.9) < 1e-12);
		assert_true(fabs(xy[2][0] - 1.1) < 1e-12 && fabs(xy[2][1] - 2.1) < 1e-12);
		m.yaw_rad = 3.14159265358979323846 / 2; /* turned: corner 0 moves to (+, -) */
		wl_calib_marker_corners(&m, xy);
		assert_true(fabs(xy[0][0] - 1.1) < 1e-12 && fabs(xy[0][1] - 1.9) < 1e-12);
	}
	/* a tag whose black square starts 2 px from the frame edge is not used
	 * (it may be cut) */
	{
		wl_calib_tags *t2 = NULL;
		assert_int_equal(wl_calib_tags_create("tag36h11", &t2, &err), WL_OK);
		assert_int_equal(wl_calib_tags_add(t2, im + 118, W - 118, W, W, &seen, &err), WL_OK);
		assert_int_equal(seen, 0);
		wl_calib_tags_destroy(t2);
	}
	wl_calib_tags_destroy(t);
	assert_int_equal(wl_calib_tags_create("tag99x", &t, &err), WL_EINVAL);
	assert_null(t);
	assert_non_null(strstr(err.msg, "tag36h11"));
	image_u8_destroy(tag);
	tag36h11_destroy(fam);
}

/* Points at two heights (floor and 0.25 m) seen from nadir: the 3-D
 * points give the focal length that a floor homography cannot. */
static void test_points3d_nadir(void **state)
{
	wl_calib_point pts[64];
	static wl_calib cal;
	wl_camera cam;
	wl_calib_opts o;
	wl_calib_report rep;
	wl_err err;
	int n;
	(void)state;
	make_camera(&cam, 2, 1400);
	n = make_points(&cam, 4, 3, 0, 0.2, 21, pts);
	n += make_points(&cam, 4, 3, 0.25, 0.2, 22, pts + n);
	for (int i = 12; i < n; i++)
		snprintf(pts[i].id, sizeof pts[i].id, "up%d", i);
	default_opts(&o);
	assert_int_equal(wl_calib_solve(pts, n, &o, &cal, &rep, &err), WL_OK);
	assert_string_equal(cal.intrinsics_source, "points3d");
	print_message("points at two heights, nadir: f %.1f (true 1400), height %.4f m\n", cal.cam.K[0],
	              rep.height_m);
	assert_true(fabs(cal.cam.K[0] - 1400) < 28);
	assert_true(fabs(rep.height_m - 2.0) < 0.04);
}

/* LENS.json round trip and validation. */
static void test_lens_file(void **state)
{
	wl_lens a, b;
	wl_err err;
	char path[300], bad[300];
	(void)state;
	memset(&a, 0, sizeof a);
	wl_camera_init(&a.cam, 640, 480, 532.8, 532.9, 342.5, 233.9);
	a.cam.dist[0] = -0.28;
	a.cam.dist[4] = 0.15;
	a.rms_px = 0.196;
	tmp_path(path, sizeof path, "LENS.json");
	assert_int_equal(wl_lens_save(path, &a, &err), WL_OK);
	assert_int_equal(wl_lens_load(path, &b, &err), WL_OK);
	assert_int_equal(b.cam.width_px, 640);
	assert_true(fabs(b.cam.K[0] - 532.8) < 1e-12 && fabs(b.cam.dist[4] - 0.15) < 1e-15);
	tmp_path(bad, sizeof bad, "badlens.json");
	{
		const char *txt = "{\"image_size_px\": [640, 480], \"camera_matrix\": [[1, 0]]}";
		assert_int_equal(wl_write_file_atomic(bad, txt, strlen(txt), &err), WL_OK);
	}
	assert_int_not_equal(wl_lens_load(bad, &b, &err), WL_OK);
	assert_non_null(strstr(err.msg, "'camera_matrix'"));
}

/* A lens with barrel distortion (k1 = -0.12, k2 = 0.03): with --lens the
 * pose comes out within 1 % / 0.5 deg and the floor maps within 2 mm;
 * ignoring the distortion (hfov only) is far worse. */
static void test_distorted_lens(void **state)
{
	wl_calib_point pts[64];
	static wl_calib cal;
	wl_camera cam;
	wl_calib_opts o;
	wl_calib_report rep;
	wl_err err;
	double max_lens, max_none;
	int n;
	(void)state;
	make_camera(&cam, 20, 1400);
	cam.dist[0] = -0.12;
	cam.dist[1] = 0.03;
	n = make_points(&cam, 6, 4, 0, 0.2, 31, pts);
	default_opts(&o);
	o.lens = &cam;
	assert_int_equal(wl_calib_solve(pts, n, &o, &cal, &rep, &err), WL_OK);
	assert_true(fabs(rep.height_m - 2.0) < 0.02 && fabs(rep.tilt_deg - 20) < 0.5);
	mapping_error_mm(&cal, &cam, 0, 0, &max_lens);
	assert_true(max_lens < 2.0);
	o.lens = NULL;
	o.hfov_deg = 2 * atan(960.0 / 1400) / DEG;
	if (wl_calib_solve(pts, n, &o, &cal, &rep, &err) == WL_OK) {
		mapping_error_mm(&cal, &cam, 0, 0, &max_none);
		assert_true(max_none > 10 * max_lens);
	} else {
		max_none = NAN;
	}
	print_message("distorted lens: floor max %.2f mm with the lens, %.1f mm without\n", max_lens,
	              max_none);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_heckbert_unit_square),
	        cmocka_unit_test(test_calfile_roundtrip),
	        cmocka_unit_test(test_calfile_validation),
	        cmocka_unit_test(test_refraction_worked_example),
	        cmocka_unit_test(test_dlt_synthetic_noise),
	        cmocka_unit_test(test_degenerate_input),
	        cmocka_unit_test(test_outlier_six_points),
	        cmocka_unit_test(test_pose_recovery),
	        cmocka_unit_test(test_nadir_needs_intrinsics),
	        cmocka_unit_test(test_water_pose),
	        cmocka_unit_test(test_tag_pixel_convention),
	        cmocka_unit_test(test_points3d_nadir),
	        cmocka_unit_test(test_lens_file),
	        cmocka_unit_test(test_distorted_lens),
	};
	return cmocka_run_group_tests(tests, setup_tmp, NULL);
}
