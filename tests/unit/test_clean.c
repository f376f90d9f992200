/*
 * test_clean.c: unit tests of the clean stage (src/clean/): Savitzky-Golay
 * weights against the published tables and scipy, the Rauch-Tung-Striebel
 * smoother against statsmodels and least squares, SHA-256 against FIPS
 * examples, the RAW.csv reader's errors, the outline distance and the whole
 * stage on a small synthetic track.
 */
#define _POSIX_C_SOURCE 200809L
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "clean/clean.h"
#include "clean/kin.h"
#include "clean/sg.h"
#include "core/sha256.h"

#define PI 3.14159265358979323846

/* ------------------------------------------------------------ helpers */

/* A small deterministic generator (64-bit LCG, Knuth's MMIX constants) and
 * Box-Muller normals, so that every run sees the same data. */
static uint64_t rng_state;
static double urand(void)
{
	rng_state = rng_state * 6364136223846793005ULL + 1442695040888963407ULL;
	return ((rng_state >> 11) + 0.5) / 9007199254740992.0;
}
static double nrand(void)
{
	return sqrt(-2 * log(urand())) * cos(2 * PI * urand());
}

/* Runs /usr/bin/python3 with a script from tests/clean and arguments; returns
 * its standard output (caller frees) or NULL. */
static char *run_python(const char *script_and_args)
{
	char cmd[2048], *out = NULL;
	size_t len = 0, cap = 0;
	FILE *p;
	int c;
	snprintf(cmd, sizeof cmd, "/usr/bin/python3 %s/tests/clean/%s", WL_SOURCE_DIR, script_and_args);
	if (!(p = popen(cmd, "r")))
		return NULL;
	while ((c = fgetc(p)) != EOF) {
		if (len + 2 > cap) {
			cap = cap ? 2 * cap : 4096;
			out = realloc(out, cap);
			assert_non_null(out);
		}
		out[len++] = (char)c;
	}
	if (out)
		out[len] = '\0';
	if (pclose(p) != 0) {
		free(out);
		return NULL;
	}
	return out;
}

/* ------------------------------------------------------ Savitzky-Golay */

static void check_table(int window, int order, int deriv, const double *num, double norm)
{
	double w[WL_SG_MAX_WINDOW];
	assert_true(wl_sg_coeffs(window, order, deriv, w));
	for (int i = 0; i < window; i++)
		assert_float_equal(w[i], num[i] / norm, 1e-12);
}

/* Savitzky & Golay (1964), Anal. Chem. 36:1627, as corrected by Steinier,
 * Termonia & Deltour (1972), Anal. Chem. 44:1906; values copied from
 * /work/shared/REFERENCES.md (recomputed there with scipy). */
static void test_sg_published_tables(void **state)
{
	(void)state;
	/* smoothing, quadratic/cubic */
	check_table(5, 2, 0, (double[]){-3, 12, 17, 12, -3}, 35);
	check_table(5, 3, 0, (double[]){-3, 12, 17, 12, -3}, 35);
	check_table(7, 2, 0, (double[]){-2, 3, 6, 7, 6, 3, -2}, 21);
	check_table(9, 2, 0, (double[]){-21, 14, 39, 54, 59, 54, 39, 14, -21}, 231);
	/* smoothing, quartic */
	check_table(7, 4, 0, (double[]){5, -30, 75, 131, 75, -30, 5}, 231);
	/* first derivative, quadratic (data order: weight of the latest sample last) */
	check_table(5, 2, 1, (double[]){-2, -1, 0, 1, 2}, 10);
	check_table(7, 2, 1, (double[]){-3, -2, -1, 0, 1, 2, 3}, 28);
	check_table(9, 2, 1, (double[]){-4, -3, -2, -1, 0, 1, 2, 3, 4}, 60);
	/* first derivative, cubic */
	check_table(5, 3, 1, (double[]){1, -8, 0, 8, -1}, 12);
	check_table(7, 3, 1, (double[]){22, -67, -58, 0, 58, 67, -22}, 252);
}

/* Debian's python3-scipy: scipy.signal.savgol_coeffs(w, p, deriv, use='dot'). */
static void test_sg_scipy(void **state)
{
	static const int cases[][3] = {{5, 2, 0}, {7, 3, 1}, {11, 2, 0}, {11, 4, 2}, {21, 3, 1}, {15, 5, 3}};
	char args[256] = "ref_sg.py", *out, *p;
	size_t len = strlen(args);
	(void)state;
	for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++)
		len += (size_t)snprintf(args + len, sizeof args - len, " %d %d %d", cases[k][0], cases[k][1],
		                        cases[k][2]);
	out = run_python(args);
	assert_non_null(out);
	p = out;
	for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
		double w[WL_SG_MAX_WINDOW];
		int win = cases[k][0], ord = cases[k][1], der = cases[k][2];
		assert_true(wl_sg_coeffs(win, ord, der, w));
		for (int i = 0; i < win; i++) {
			char *end;
			double v = strtod(p, &end);
			assert_true(end != p);
			p = end;
			assert_float_equal(w[i], v, 1e-10);
		}
	}
	free(out);
}

/* Uneven spacing: the weights reproduce any polynomial of the fit's order
 * exactly (the defining property of a least-squares polynomial fit). */
static void test_sg_uneven_exact(void **state)
{
	double t[9], w0[9], w1[9], v0 = 0, v1 = 0, t0;
	(void)state;
	rng_state = 11;
	t[0] = 0;
	for (int i = 1; i < 9; i++)
		t[i] = t[i - 1] + 0.02 + 0.04 * urand();
	t0 = t[4] + 0.003;
	assert_true(wl_sg_weights(t, 9, t0, 3, 0, w0));
	assert_true(wl_sg_weights(t, 9, t0, 3, 1, w1));
	for (int i = 0; i < 9; i++) {
		double z = 1 - 2 * t[i] + 3 * t[i] * t[i] - 4 * t[i] * t[i] * t[i];
		v0 += w0[i] * z;
		v1 += w1[i] * z;
	}
	assert_float_equal(v0, 1 - 2 * t0 + 3 * t0 * t0 - 4 * t0 * t0 * t0, 1e-10);
	assert_float_equal(v1, -2 + 6 * t0 - 12 * t0 * t0, 1e-8);
	assert_false(wl_sg_weights(t, 3, t0, 3, 0, w0)); /* too few points */
}

/* ------------------------------------------------------------- RTS */

static void make_series(size_t n, double *t, double *z, int gaps)
{
	rng_state = 42;
	t[0] = 0.1;
	for (size_t i = 1; i < n; i++)
		t[i] = t[i - 1] + 0.02 + 0.03 * urand(); /* uneven steps */
	for (size_t i = 0; i < n; i++)
		z[i] = 0.3 + 0.12 * t[i] + 0.05 * sin(3 * t[i]) + 0.002 * nrand();
	if (gaps) {
		z[7] = NAN;
		z[8] = NAN;
		z[30] = NAN;
	}
}

/* statsmodels' KalmanSmoother (Debian python3-statsmodels) on the same model
 * and data: smoothed states and covariances and the log-likelihood. */
static void check_statsmodels(int dim, double q)
{
	enum { N = 60 };
	double t[N], z[N], ll = 0, maxd = 0, maxc = 0;
	wl_kin_step st[N];
	wl_kin_cfg cfg = {dim, q, 0.002 * 0.002, 0, {1.0, 1.0, 10.0}};
	char path[] = "/tmp/wl-test-clean-XXXXXX", args[256], *out, *p;
	FILE *fp;
	int fd;
	make_series(N, t, z, 1);
	assert_true(wl_kin_smooth(&cfg, N, t, z, st, &ll));
	fd = mkstemp(path);
	assert_true(fd >= 0);
	fp = fdopen(fd, "w");
	fprintf(fp, "%d %.17g %.17g 0 %.17g %.17g %.17g\n", dim, cfg.q, cfg.r, cfg.P0[0], cfg.P0[1],
	        cfg.P0[2]);
	for (int i = 0; i < N; i++)
		fprintf(fp, "%.17g %.17g\n", t[i], z[i]);
	fclose(fp);
	snprintf(args, sizeof args, "ref_rts.py %s", path);
	out = run_python(args);
	unlink(path);
	assert_non_null(out);
	p = out;
	for (int i = 0; i < N; i++) {
		for (int a = 0; a < dim; a++) {
			double ref = strtod(p, &p);
			maxd = fmax(maxd, fabs(st[i].xs[a] - ref));
			assert_float_equal(st[i].xs[a], ref, 1e-6);
		}
		for (int a = 0; a < dim; a++)
			for (int b = 0; b < dim; b++) {
				double ref = strtod(p, &p);
				maxc = fmax(maxc, fabs(st[i].Ps[a * 3 + b] - ref) / (fabs(ref) + 1e-300));
				/* covariances: relative agreement (they span many decades) */
				assert_float_equal(st[i].Ps[a * 3 + b], ref, 1e-6 * fabs(ref) + 1e-15);
			}
	}
	p = strstr(p, "llf");
	assert_non_null(p);
	assert_float_equal(ll, strtod(p + 3, NULL), 1e-6);
	print_message(
	        "statsmodels, dim %d q %g: max |state diff| %.3g, max rel. cov diff %.3g, llf %.9f vs %.9f\n",
	        dim, q, maxd, maxc, ll, strtod(p + 3, NULL));
	free(out);
}

static void test_rts_statsmodels_cv(void **state)
{
	(void)state;
	check_statsmodels(2, 0.05);
	check_statsmodels(2, 1e-4);
}

static void test_rts_statsmodels_ca(void **state)
{
	(void)state;
	check_statsmodels(3, 0.5);
}

/* With no process noise and a wide prior the smoothed constant-velocity
 * track is the ordinary least-squares line (REFERENCES.md, RTS section);
 * compared with the normal equations solved directly. */
static void test_rts_zero_q_is_ls_line(void **state)
{
	enum { N = 80 };
	double t[N], z[N], sw = 0, st_ = 0, stt = 0, sz = 0, stz = 0, a, b, det;
	wl_kin_step s[N];
	wl_kin_cfg cfg = {2, 0.0, 1e-2, 0, {1e8, 1e8, 0}};
	(void)state;
	make_series(N, t, z, 0);
	assert_true(wl_kin_smooth(&cfg, N, t, z, s, NULL));
	for (int i = 0; i < N; i++) {
		sw += 1, st_ += t[i], stt += t[i] * t[i], sz += z[i], stz += t[i] * z[i];
	}
	det = sw * stt - st_ * st_;
	b = (sw * stz - st_ * sz) / det;
	a = (sz - b * st_) / sw;
	for (int i = 0; i < N; i++) {
		assert_float_equal(s[i].xs[0], a + b * t[i], 1e-6);
		assert_float_equal(s[i].xs[1], b, 1e-6);
	}
}

/* Angular axes: the innovation is taken modulo 2 pi, so a heading that runs
 * through +-pi is smoothed as one unwrapped line. */
static void test_rts_heading_unwrap(void **state)
{
	enum { N = 100 };
	double t[N], z[N];
	wl_kin_step s[N];
	wl_kin_cfg cfg = {2, 1e-3, 1e-4, 1, {PI * PI, 100, 0}};
	(void)state;
	for (int i = 0; i < N; i++) {
		double h = 2.8 + 0.02 * i; /* passes pi at i = 17 */
		t[i] = i * 0.04;
		z[i] = atan2(sin(h), cos(h));
	}
	assert_true(wl_kin_smooth(&cfg, N, t, z, s, NULL));
	assert_float_equal(s[N - 1].xs[0], 2.8 + 0.02 * (N - 1), 1e-6);
	assert_float_equal(s[50].xs[1], 0.5, 1e-6);
}

/* ---------------------------------------------------------- SHA-256 */

/* FIPS 180-2, appendix B.1 and B.2 examples. */
static void test_sha256_fips(void **state)
{
	wl_sha256 h;
	char hex[65];
	const char *two = "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq";
	(void)state;
	wl_sha256_init(&h);
	wl_sha256_update(&h, "abc", 3);
	wl_sha256_final(&h, hex);
	assert_string_equal(hex, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
	wl_sha256_init(&h);
	for (size_t i = 0; two[i]; i++) /* byte by byte across block edges */
		wl_sha256_update(&h, two + i, 1);
	wl_sha256_final(&h, hex);
	assert_string_equal(hex, "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
}

/* ------------------------------------------------------------ reader */

static void expect_raw_error(const char *text, const char *needle)
{
	wl_clean_raw *raw = (wl_clean_raw *)1;
	wl_err err = {0};
	assert_int_not_equal(wl_clean_raw_read_mem("RAW.csv", text, strlen(text), &raw, &err), WL_OK);
	assert_null(raw);
	if (!strstr(err.msg, needle))
		fail_msg("error '%s' lacks '%s'", err.msg, needle);
}

#define HDR "t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status,margin,size_px,heading_source\n"
#define ROW(t, f) t "," f ",1,10,10,0.1,0.2,0.3,ok,50,30,tag\n"

static void test_raw_errors(void **state)
{
	(void)state;
	expect_raw_error("t_s,frame,id,x_m,y_m,status\n0,0,1,0,0,ok\n",
	                 "RAW.csv:1: the header has no column 'heading_rad'");
	expect_raw_error(HDR ROW("0.0", "0") "0.033,1,1,10,10,abc,0.2,0.3,ok,50,30,tag\n",
	                 "RAW.csv:3: column 'x_m': 'abc' is not a number");
	expect_raw_error(HDR ROW("0.0", "0") ROW("0.05", "1") ROW("0.04", "2"),
	                 "RAW.csv:4: time t_s 0.040000");
	expect_raw_error(HDR ROW("0.0", "0") ROW("0.05", "1") ROW("0.06", "1"),
	                 "RAW.csv:4: frame 1 of robot 1 appears twice");
	expect_raw_error(HDR ROW("0.0", "0") "0.05,1,1,,,,,,maybe,,,\n",
	                 "RAW.csv:3: column 'status': 'maybe'");
	expect_raw_error(HDR, "no data rows");
	expect_raw_error("", "empty");
}

static void test_raw_ok(void **state)
{
	const char *text = HDR ROW("0.0", "0") "0.0,0,2,10,10,0.5,0.6,,ok,50,30,caps\n"
	                                       "0.04,1,1,,,,,,lost,,,\n" ROW("0.08", "2");
	wl_clean_raw *raw = NULL;
	wl_err err = {0};
	(void)state;
	assert_int_equal(wl_clean_raw_read_mem("RAW.csv", text, strlen(text), &raw, &err), WL_OK);
	assert_int_equal(raw->ntracks, 2);
	assert_int_equal(raw->tracks[0].n, 3);
	assert_false(raw->tracks[0].s[1].has_pos);
	assert_true(raw->tracks[1].s[0].has_pos);
	assert_false(raw->tracks[1].s[0].has_heading);
	assert_int_equal(raw->tracks[0].s[2].line, 5);
	wl_clean_raw_destroy(raw);
}

/* ----------------------------------------------------------- outline */

static void test_outline_dist(void **state)
{
	wl_clean_params p;
	(void)state;
	wl_clean_params_init(&p);
	p.n_outline = 4;
	p.outline_m[0][0] = 0, p.outline_m[0][1] = 0;
	p.outline_m[1][0] = 2, p.outline_m[1][1] = 0;
	p.outline_m[2][0] = 2, p.outline_m[2][1] = 1;
	p.outline_m[3][0] = 0, p.outline_m[3][1] = 1;
	assert_float_equal(wl_clean_outline_dist(&p, 1.0, 0.5), 0.5, 1e-12);
	assert_float_equal(wl_clean_outline_dist(&p, 1.9, 0.5), 0.1, 1e-12);
	assert_float_equal(wl_clean_outline_dist(&p, 3.0, 0.5), -1.0, 1e-12);
}

/* ------------------------------------------------------ whole stage */

/* A robot at rest for 1 s that jumps to 0.3 m/s at once, runs straight, and
 * at t = 5 s turns sharply by 90 degrees (its direction of travel and its
 * heading change within one frame), 30 fps, 2 mm and 2 degrees of noise,
 * with outliers every 20th frame (10 cm) and one heading flipped by 180
 * degrees.  A manoeuvre is exactly what the smoother must follow: every
 * injected outlier is flagged and replaced by the smoothed pose, no other
 * detection is flagged (at most one false alarm: the gate at 0.999 expects
 * 0.3 in 300), the track stays within a few noise levels of the truth at the
 * start and in the corner, and the robot is found moving from t = 1 s. */
static void test_stage_synthetic(void **state)
{
	enum { N = 300 };
	static char text[N * 120 + 200];
	double tx[N], ty[N], th[N];
	size_t len = 0;
	wl_clean_raw *raw = NULL;
	wl_err err = {0};
	wl_clean_params p;
	wl_clean_result res;
	double se = 0, emax = 0, emax_out = 0, hmax = 0;
	size_t ne = 0, flagged = 0, false_alarms = 0;
	(void)state;
	rng_state = 7;
	len += (size_t)snprintf(text + len, sizeof text - len, HDR);
	for (int i = 0; i < N; i++) {
		/* rest until 1 s, then 0.3 m/s along 0.5 rad; from 5 s along 0.5 + pi/2 */
		double t = i / 30.0, x = 0.2, y = 0.3, h = 0.5, mx, my, mh;
		if (t > 1) {
			double s1 = 0.3 * (fmin(t, 5) - 1), s2 = t > 5 ? 0.3 * (t - 5) : 0;
			x += s1 * cos(0.5) + s2 * cos(0.5 + PI / 2);
			y += s1 * sin(0.5) + s2 * sin(0.5 + PI / 2);
			h = t > 5 ? 0.5 + PI / 2 : 0.5;
		}
		tx[i] = x, ty[i] = y, th[i] = h;
		mx = x + 0.002 * nrand(), my = y + 0.002 * nrand(), mh = h + 0.035 * nrand();
		if (i % 20 == 10)
			mx += 0.1;
		if (i == 155)
			mh += PI;
		mh = atan2(sin(mh), cos(mh));
		len += (size_t)snprintf(text + len, sizeof text - len,
		                        "%.6f,%d,3,0,0,%.6f,%.6f,%.6f,ok,50,30,tag\n", t, i, mx, my, mh);
	}
	assert_int_equal(wl_clean_raw_read_mem("RAW.csv", text, len, &raw, &err), WL_OK);
	wl_clean_params_init(&p);
	p.trim = WL_TRIM_NONE;
	assert_int_equal(wl_clean_run(raw, &p, NULL, &res, &err), WL_OK);
	assert_int_equal(res.nrows, N);
	for (size_t i = 0; i < res.nrows; i++) {
		const wl_clean_row *r = &res.rows[i];
		int f = (int)r->frame;
		double e = hypot(r->x_m - tx[f], r->y_m - ty[f]),
		       eh = fabs(atan2(sin(r->heading_rad - th[f]), cos(r->heading_rad - th[f])));
		if (f % 20 == 10 || f == 155) {
			assert_int_equal(r->status, WL_ST_OUTLIER);
			/* the smoothed pose in its place: within one frame's travel (10 mm)
			 * and a noise level of the truth, also where the outlier falls on
			 * the jump (frame 30) or the corner (frame 150) */
			assert_true(e < 0.012);
			emax_out = fmax(emax_out, e);
		} else {
			false_alarms += r->status == WL_ST_OUTLIER;
			emax = fmax(emax, e);
		}
		flagged += r->status == WL_ST_OUTLIER;
		hmax = fmax(hmax, eh);
		se += e * e;
		ne += 2;
	}
	print_message("jump and turn: %zu flagged (%zu false alarms), position RMSE %.2f mm, worst %.2f mm "
	              "(%.2f mm where an outlier was replaced), worst heading %.2f deg, %zu + %zu restarts\n",
	              flagged, false_alarms, 1e3 * sqrt(se / ne), 1e3 * emax, 1e3 * emax_out, hmax * 180 / PI,
	              res.robots[0].restarts_pos, res.robots[0].restarts_heading);
	assert_true(false_alarms <= 1);
	assert_int_equal(res.robots[0].widen_pos, 0);
	assert_true(sqrt(se / ne) < 0.0015); /* below the 2 mm raw noise */
	assert_true(emax < 0.008);           /* 4 noise levels, also at the jump and in the corner */
	assert_true(res.robots[0].restarts_heading >= 1); /* the heading's step restarted it */
	assert_true(hmax < 4 * 0.035);
	assert_true(res.robots[0].onset_s > 0.9 && res.robots[0].onset_s < 1.2);
	assert_false(res.robots[0].still);
	wl_clean_result_release(&res);
	wl_clean_raw_destroy(raw);
}

/* A robot on a straight line at 0.14 m/s from t = 1 s with 3 mm of
 * position noise and no heading (a colour blob), smoothed with a process
 * noise given far too large (10 m^2/s^3), so that the smoother's velocity
 * uncertainty is far above the robot's speed: it is still found moving, at
 * the right time, because the moving test uses the displacement of the
 * smoothed position.  The same track without motion is still. */
static void stage_moving(int move, wl_clean_result *res)
{
	enum { N = 240 };
	static char text[N * 120 + 200];
	size_t len = 0;
	wl_clean_raw *raw = NULL;
	wl_err err = {0};
	wl_clean_params p;
	rng_state = 11;
	len += (size_t)snprintf(text + len, sizeof text - len, HDR);
	for (int i = 0; i < N; i++) {
		double t = i / 30.0, s = move && t > 1 ? 0.14 * (t - 1) : 0;
		len += (size_t)snprintf(text + len, sizeof text - len, "%.6f,%d,4,0,0,%.6f,%.6f,,ok,50,30,\n",
		                        t, i, 0.5 + s + 0.003 * nrand(), 0.4 + 0.003 * nrand());
	}
	assert_int_equal(wl_clean_raw_read_mem("RAW.csv", text, len, &raw, &err), WL_OK);
	wl_clean_params_init(&p);
	p.q_pos = 10;
	assert_int_equal(wl_clean_run(raw, &p, NULL, res, &err), WL_OK);
	wl_clean_raw_destroy(raw);
}

static void test_moving_not_still(void **state)
{
	wl_clean_result res;
	(void)state;
	stage_moving(1, &res);
	print_message("0.14 m/s blob: velocity sigma %.4f m/s, still threshold %.4f m/s, onset %.3f s\n",
	              res.robots[0].speed_sigma_mps, res.robots[0].speed_threshold_mps,
	              res.robots[0].onset_s);
	assert_true(5 * res.robots[0].speed_sigma_mps > 0.14); /* the old rule would call it still */
	assert_false(res.robots[0].still);
	assert_true(res.robots[0].onset_s >= 1.0 && res.robots[0].onset_s < 1.4);
	wl_clean_result_release(&res);
	stage_moving(0, &res);
	assert_true(res.robots[0].still);
	wl_clean_result_release(&res);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_sg_published_tables), cmocka_unit_test(test_sg_scipy),
	        cmocka_unit_test(test_sg_uneven_exact),     cmocka_unit_test(test_rts_statsmodels_cv),
	        cmocka_unit_test(test_rts_statsmodels_ca),  cmocka_unit_test(test_rts_zero_q_is_ls_line),
	        cmocka_unit_test(test_rts_heading_unwrap),  cmocka_unit_test(test_sha256_fips),
	        cmocka_unit_test(test_raw_errors),          cmocka_unit_test(test_raw_ok),
	        cmocka_unit_test(test_outline_dist),        cmocka_unit_test(test_stage_synthetic),
	        cmocka_unit_test(test_moving_not_still),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
