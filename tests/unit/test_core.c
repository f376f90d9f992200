/*
 * test_core.c: the core module: CSV reading/writing, atomic files, JSON
 * helpers, small linear algebra and the camera model with refraction.
 */
#define _POSIX_C_SOURCE 200809L
#include <locale.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <fcntl.h>
#include <unistd.h>
#include <dirent.h>

#include <cmocka.h>

#include "core/afile.h"
#include "core/camera.h"
#include "core/csvio.h"
#include "core/jsonio.h"
#include "core/linalg.h"

#define PI 3.14159265358979323846

/* ---- CSV ---- */

typedef struct {
	int rows;
	long lines[8];
	char cells[8][4][32];
} csv_seen;

static wl_status collect(const wl_csv_row *row, void *ctx, wl_err *err)
{
	csv_seen *s = ctx;
	(void)err;
	if (s->rows < 8) {
		s->lines[s->rows] = row->line;
		for (size_t i = 0; i < row->nfields && i < 4; i++)
			snprintf(s->cells[s->rows][i], 32, "%s", row->fields[i]);
	}
	s->rows++;
	return WL_OK;
}

static void csv_reads_quotes_comments_and_line_numbers(void **state)
{
	const char text[] = "\xEF\xBB\xBF"
	                    "a,b,c\n"
	                    "# a comment\n"
	                    "\n"
	                    "1,\"two, quoted\",3\n"
	                    "\"multi\nline\",5,6\r\n"
	                    "7,8,9"; /* no final newline: csv_fini must deliver it */
	csv_seen s = {0};
	wl_err err = {0};
	(void)state;
	assert_int_equal(wl_csv_read_mem("t.csv", text, sizeof text - 1, collect, &s, &err), WL_OK);
	assert_int_equal(s.rows, 4);
	assert_string_equal(s.cells[0][0], "a"); /* BOM stripped */
	assert_string_equal(s.cells[1][1], "two, quoted");
	assert_int_equal(s.lines[1], 4);
	assert_string_equal(s.cells[2][0], "multi\nline");
	assert_int_equal(s.lines[2], 5);
	assert_int_equal(s.lines[3], 7);
	assert_string_equal(s.cells[3][2], "9");
}

static void csv_unclosed_quote_names_the_line(void **state)
{
	const char text[] = "a,b\n1,2\n\"open,3\n";
	csv_seen s = {0};
	wl_err err = {0};
	(void)state;
	assert_int_equal(wl_csv_read_mem("bad.csv", text, sizeof text - 1, collect, &s, &err), WL_EFORMAT);
	assert_non_null(strstr(err.msg, "bad.csv:"));
}

static wl_status parse_second_row(const wl_csv_row *row, void *ctx, wl_err *err)
{
	double *v = ctx;
	static int col;
	if (row->index == 0) {
		col = wl_csv_col(row, "x_m");
		return WL_OK;
	}
	return wl_csv_get_double(row, col, "x_m", v, err);
}

static void csv_number_errors_name_file_line_and_column(void **state)
{
	const char good[] = "id, x_m \n1,0.25\n", bad[] = "id,x_m\n1,0,25\n2,abc\n";
	double v = 0;
	wl_err err = {0};
	(void)state;
	assert_int_equal(wl_csv_read_mem("g.csv", good, sizeof good - 1, parse_second_row, &v, &err), WL_OK);
	assert_true(v == 0.25);
	/* "0,25" splits into two cells, so x_m reads "0": the third row fails */
	assert_int_equal(wl_csv_read_mem("layout.csv", bad, sizeof bad - 1, parse_second_row, &v, &err),
	                 WL_EFORMAT);
	assert_non_null(strstr(err.msg, "layout.csv:3: column 'x_m': 'abc' is not a number"));
}

static void numbers_use_a_dot_whatever_the_locale(void **state)
{
	char b[WL_NUMBUF];
	(void)state;
	if (!setlocale(LC_NUMERIC, "de_DE.UTF-8"))
		skip(); /* scripts/setup generates it; without it there is nothing to show */
	assert_string_equal(wl_fmt_fixed(b, 1.25, 3), "1.250");
	assert_string_equal(wl_fmt_g(b, -0.000125, 3), "-0.000125");
	assert_string_equal(wl_fmt_fixed(b, -0.0001, 2), "0.00"); /* no "-0.00" */
	setlocale(LC_NUMERIC, "C");
}

/* ---- atomic files ---- */

static int count_tmp_files(const char *dir)
{
	DIR *d = opendir(dir);
	struct dirent *e;
	int n = 0;
	while (d && (e = readdir(d)))
		if (strstr(e->d_name, ".tmp-"))
			n++;
	if (d)
		closedir(d);
	return n;
}

static void atomic_file_commit_and_abort(void **state)
{
	char dir[] = "/tmp/wl-core-XXXXXX", path[256], *back = NULL;
	wl_afile *af;
	wl_err err = {0};
	struct stat st;
	(void)state;
	assert_non_null(mkdtemp(dir));
	snprintf(path, sizeof path, "%s/out.csv", dir);

	assert_int_equal(wl_afile_open(path, &af, &err), WL_OK);
	fputs("half", wl_afile_fp(af));
	assert_int_equal(stat(path, &st), -1); /* nothing at the target until commit */
	wl_afile_abort(af);
	assert_int_equal(stat(path, &st), -1);
	assert_int_equal(count_tmp_files(dir), 0);

	assert_int_equal(wl_write_file_atomic(path, "whole\n", 6, &err), WL_OK);
	assert_int_equal(wl_read_file(path, 100, &back, NULL, &err), WL_OK);
	assert_string_equal(back, "whole\n");
	free(back);
	assert_int_equal(count_tmp_files(dir), 0);
	assert_int_equal(wl_read_file(path, 3, &back, NULL, &err), WL_ELIMIT);

	snprintf(path, sizeof path, "%s/no/such/dir/out.csv", dir);
	assert_int_equal(wl_write_file_atomic(path, "x", 1, &err), WL_EIO);
	assert_non_null(strstr(err.msg, "no/such/dir/out.csv"));

	snprintf(path, sizeof path, "%s/out.csv", dir);
	unlink(path);
	rmdir(dir);
}

/* wl_afile_sync: the data reaches the disk but the target keeps its previous
 * content until commit; a sync that fails (the descriptor replaced by
 * /dev/full: ENOSPC at the flush) removes the temporary, names the target
 * and leaves it as it was. */
static void atomic_file_sync(void **state)
{
	char dir[] = "/tmp/wl-core-XXXXXX", path[256], *back = NULL;
	wl_afile *af;
	wl_err err = {0};
	int full;
	(void)state;
	assert_non_null(mkdtemp(dir));
	snprintf(path, sizeof path, "%s/out.csv", dir);
	assert_int_equal(wl_write_file_atomic(path, "previous\n", 9, &err), WL_OK);

	assert_int_equal(wl_afile_open(path, &af, &err), WL_OK);
	fputs("new\n", wl_afile_fp(af));
	assert_int_equal(wl_afile_sync(af, &err), WL_OK);
	assert_int_equal(wl_read_file(path, 100, &back, NULL, &err), WL_OK);
	assert_string_equal(back, "previous\n"); /* not replaced before commit */
	free(back);
	assert_int_equal(count_tmp_files(dir), 1);
	assert_int_equal(wl_afile_commit(af, &err), WL_OK);
	assert_int_equal(wl_read_file(path, 100, &back, NULL, &err), WL_OK);
	assert_string_equal(back, "new\n");
	free(back);
	assert_int_equal(count_tmp_files(dir), 0);

	assert_int_equal(wl_afile_open(path, &af, &err), WL_OK);
	fputs("lost\n", wl_afile_fp(af));
	full = open("/dev/full", O_WRONLY);
	assert_true(full >= 0);
	assert_true(dup2(full, fileno(wl_afile_fp(af))) >= 0);
	close(full);
	assert_int_equal(wl_afile_sync(af, &err), WL_EIO);
	assert_non_null(strstr(err.msg, "out.csv"));
	assert_non_null(strstr(err.msg, "free some space"));
	assert_int_equal(count_tmp_files(dir), 0);
	wl_afile_abort(af);
	assert_int_equal(wl_read_file(path, 100, &back, NULL, &err), WL_OK);
	assert_string_equal(back, "new\n");
	free(back);
	assert_int_equal(wl_afile_sync(NULL, &err), WL_OK);

	unlink(path);
	rmdir(dir);
}

/* ---- JSON ---- */

static void json_errors_give_line_and_column(void **state)
{
	const char bad[] = "{\n  \"a\": 1,\n  \"b\": [1, 2,, 3]\n}\n";
	const char good[] = "{\"k\": [1.5, 2.5, 3.5], \"s\": \"x\"}";
	cJSON *j = NULL;
	double v[3];
	const char *s;
	wl_err err = {0};
	(void)state;
	assert_int_equal(wl_json_parse("cal.json", bad, sizeof bad - 1, &j, &err), WL_EFORMAT);
	assert_null(j);
	assert_non_null(strstr(err.msg, "cal.json:3:"));
	assert_int_equal(wl_json_parse("ok.json", good, sizeof good - 1, &j, &err), WL_OK);
	assert_int_equal(wl_json_numbers(j, "k", "ok.json", v, 3, &err), WL_OK);
	assert_true(v[2] == 3.5);
	assert_int_equal(wl_json_numbers(j, "k", "ok.json", v, 2, &err), WL_EFORMAT);
	assert_int_equal(wl_json_string(j, "s", "ok.json", &s, &err), WL_OK);
	assert_string_equal(s, "x");
	assert_int_equal(wl_json_number(j, "missing", "ok.json", v, &err), WL_EFORMAT);
	assert_non_null(strstr(err.msg, "'missing'"));
	cJSON_Delete(j);
}

static void json_depth_is_limited(void **state)
{
	char deep[2 * (WL_JSON_MAX_DEPTH + 10) + 1];
	cJSON *j = NULL;
	wl_err err = {0};
	int n = WL_JSON_MAX_DEPTH + 10;
	(void)state;
	for (int i = 0; i < n; i++) {
		deep[i] = '[';
		deep[2 * n - 1 - i] = ']';
	}
	deep[2 * n] = '\0';
	assert_int_equal(wl_json_parse("deep.json", deep, (size_t)(2 * n), &j, &err), WL_ELIMIT);
	assert_null(j);
}

/* ---- linear algebra ---- */

static void jacobi_eigen_matches_the_definition(void **state)
{
	/* a symmetric 4x4 with known spectrum: Q diag(1,2,3,10) Qᵀ */
	double a[16] = {4, 1, 2, 0.5, 1, 3, 0.25, 1, 2, 0.25, 5, 0.75, 0.5, 1, 0.75, 2}, orig[16];
	double ev[4], V[16];
	(void)state;
	memcpy(orig, a, sizeof a);
	wl_sym_eig(a, 4, ev, V);
	for (int k = 0; k < 4; k++) {
		if (k)
			assert_true(ev[k] >= ev[k - 1]);
		for (int i = 0; i < 4; i++) {
			double av = 0;
			for (int j = 0; j < 4; j++)
				av += orig[i * 4 + j] * V[j * 4 + k];
			assert_true(fabs(av - ev[k] * V[i * 4 + k]) < 1e-12);
		}
	}
	/* the trace is the sum of the eigenvalues */
	assert_true(fabs(ev[0] + ev[1] + ev[2] + ev[3] - 14.0) < 1e-12);
	/* 2x2 [[2,1],[1,2]] has eigenvalues 1 and 3 (worked by hand) */
	double b[4] = {2, 1, 1, 2}, e2[2], V2[4];
	wl_sym_eig(b, 2, e2, V2);
	assert_true(fabs(e2[0] - 1) < 1e-14 && fabs(e2[1] - 3) < 1e-14);
}

static void solve_and_invert(void **state)
{
	double a[9] = {0, 2, 1, 1, 1, 1, 2, 1, 0}, b[3] = {5, 4, 4}, inv[9], prod[9];
	double a0[9];
	(void)state;
	memcpy(a0, a, sizeof a);
	/* x = (1, 2, 1) by construction; the zero pivot forces a row swap */
	assert_true(wl_solve(a, b, 3));
	assert_true(fabs(b[0] - 1) < 1e-14 && fabs(b[1] - 2) < 1e-14 && fabs(b[2] - 1) < 1e-14);
	assert_true(wl_invert(a0, inv, 3));
	wl_mul3(a0, inv, prod);
	for (int i = 0; i < 9; i++)
		assert_true(fabs(prod[i] - (i % 4 == 0)) < 1e-14);
	double sing[4] = {1, 2, 2, 4}, rhs[2] = {1, 2};
	assert_false(wl_solve(sing, rhs, 2));
}

/* ---- camera ---- */

static void nadir_camera_maps_x_right_and_y_up(void **state)
{
	wl_camera cam;
	double eye[3] = {1.2, 0.8, 2.0}, tgt[3] = {1.2, 0.8, 0}, C[3], u0, v0, u1, v1, u2, v2;
	(void)state;
	wl_camera_init(&cam, 1920, 1080, 1400, 1400, 959.5, 539.5);
	assert_true(wl_camera_look_at(&cam, eye, tgt, 0));
	wl_camera_position(&cam, C);
	assert_true(fabs(C[0] - 1.2) < 1e-12 && fabs(C[2] - 2.0) < 1e-12);
	assert_true(fabs(wl_det3(cam.R) - 1) < 1e-12); /* a proper rotation */
	assert_true(wl_camera_project(&cam, (double[3]){1.2, 0.8, 0}, &u0, &v0));
	assert_true(wl_camera_project(&cam, (double[3]){1.3, 0.8, 0}, &u1, &v1));
	assert_true(wl_camera_project(&cam, (double[3]){1.2, 0.9, 0}, &u2, &v2));
	assert_true(fabs(u0 - 959.5) < 1e-9 && fabs(v0 - 539.5) < 1e-9);
	assert_true(u1 > u0 && fabs(v1 - v0) < 1e-9); /* +x is right */
	assert_true(v2 < v0 && fabs(u2 - u0) < 1e-9); /* +y is up on screen */
	/* pinhole similar triangles: 0.1 m at 2 m with f = 1400 px is 70 px */
	assert_true(fabs(u1 - u0 - 70) < 1e-9);
}

static void projection_round_trips_with_distortion(void **state)
{
	wl_camera cam;
	double eye[3] = {0.3, -0.9, 2.0}, tgt[3] = {1.2, 0.8, 0};
	(void)state;
	wl_camera_init(&cam, 1920, 1080, 1500, 1500, 955, 545);
	cam.dist[0] = -0.12;
	cam.dist[1] = 0.03;
	cam.dist[2] = 0.001;
	cam.dist[3] = -0.0007;
	assert_true(wl_camera_look_at(&cam, eye, tgt, 0.1));
	for (double x = 0; x <= 2.4; x += 0.6)
		for (double y = 0; y <= 1.6; y += 0.4) {
			double P[3] = {x, y, 0.25}, u, v, xb, yb;
			assert_true(wl_camera_project(&cam, P, &u, &v));
			assert_true(wl_camera_pixel_to_plane(&cam, u, v, 0.25, &xb, &yb));
			assert_true(fabs(xb - x) < 1e-9 && fabs(yb - y) < 1e-9);
		}
}

static void refraction_worked_example(void **state)
{
	/* tests/data/references.md, "Refraction at a flat water surface": camera 2.0 m
	 * above the surface, ray 20 deg off nadir, marker 0.30 m deep ->
	 * 0.80758 m from nadir (n = 1.333); 0.83713 m if refraction is ignored. */
	wl_camera cam;
	double eye[3] = {0, 0, 2.3}, tgt[3] = {0, 0, 0}, x, y, u, v;
	double th = 20 * PI / 180;
	(void)state;
	wl_camera_init(&cam, 2000, 2000, 1000, 1000, 1000, 1000);
	assert_true(wl_camera_look_at(&cam, eye, tgt, 0));
	cam.water_depth_m = 0.30;
	cam.water_index = 1.333;
	/* the pixel whose ray leaves 20 deg off nadir toward +x */
	u = 1000 + 1000 * tan(th);
	v = 1000;
	assert_true(wl_camera_pixel_to_plane_water(&cam, u, v, 0, &x, &y));
	assert_true(fabs(x - 0.80758) < 1e-4 && fabs(y) < 1e-12);
	assert_true(wl_camera_pixel_to_plane(&cam, u, v, 0, &x, &y));
	assert_true(fabs(x - 0.83713) < 1e-4);
	/* and forward: the floor point at 0.80758 m images on that pixel */
	double su, sv;
	assert_true(wl_camera_project_water(&cam, (double[3]){0.80758, 0, 0}, &su, &sv));
	assert_true(fabs(su - u) < 0.05 && fabs(sv - v) < 1e-9);
	/* paraxial apparent depth d/n = 0.2251 m for 0.30 m (tests/data/references.md) */
	/* a ray to a point 1 mm off nadir: apparent depth = d * tan(tw) / tan(ta) */
	double s = wl_refract_surface_offset(2.0, 0.001, 0.30, 1.333);
	double ta = s / 2.0, tw = (0.001 - s) / 0.30;
	assert_true(fabs(0.30 * tw / ta - 0.2251) < 1e-4);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(csv_reads_quotes_comments_and_line_numbers),
	        cmocka_unit_test(csv_unclosed_quote_names_the_line),
	        cmocka_unit_test(csv_number_errors_name_file_line_and_column),
	        cmocka_unit_test(numbers_use_a_dot_whatever_the_locale),
	        cmocka_unit_test(atomic_file_commit_and_abort),
	        cmocka_unit_test(atomic_file_sync),
	        cmocka_unit_test(json_errors_give_line_and_column),
	        cmocka_unit_test(json_depth_is_limited),
	        cmocka_unit_test(jacobi_eigen_matches_the_definition),
	        cmocka_unit_test(solve_and_invert),
	        cmocka_unit_test(nadir_camera_maps_x_right_and_y_up),
	        cmocka_unit_test(projection_round_trips_with_distortion),
	        cmocka_unit_test(refraction_worked_example),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
