/*
 * test_report.c: the report module: tick positions (linear and symmetric
 * log), the symmetric-log transform and the viridis map against
 * matplotlib's, tick labels under a decimal-comma locale, SVG/PNG files from
 * the cairo layer, the per-run plots from a clip folder, the sweep plots and
 * report.html.
 */
#define _POSIX_C_SOURCE 200809L
#include <dirent.h>
#include <locale.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cmocka.h>
#include <cjson/cJSON.h>

#include "core/afile.h"
#include "core/angle.h"
#include "core/jsonio.h"
#include "core/numfmt.h"
#include "measure/measure.h"
#include "pipeline/pipeline.h"
#include "report/report.h"

#define PI 3.14159265358979323846

static char tmpdir[256];

static int setup_dir(void **state)
{
	(void)state;
	snprintf(tmpdir, sizeof tmpdir, "/tmp/wl_test_report_XXXXXX");
	return mkdtemp(tmpdir) ? 0 : -1;
}

static int teardown_dir(void **state)
{
	char cmd[400];
	(void)state;
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmpdir);
	return system(cmd) == 0 ? 0 : -1;
}

/* ---- ticks ---- */

static int is_125_step(double step)
{
	double e = floor(log10(step) + 1e-12), f = step / pow(10, e);
	/* the step is measured as a difference of two ticks: allow for the
	 * rounding of ticks far from zero (up to 1e10 steps away here) */
	return fabs(f - 1) < 1e-5 || fabs(f - 2) < 1e-5 || fabs(f - 5) < 1e-5 || fabs(f - 10) < 1e-5;
}

static void test_ticks_linear_examples(void **state)
{
	double t[WL_TICKS_MAX];
	size_t n, i;
	(void)state;
	n = wl_ticks_linear(0, 1, 6, t, WL_TICKS_MAX);
	assert_int_equal(n, 6);
	for (i = 0; i < n; i++)
		assert_true(fabs(t[i] - 0.2 * (double)i) < 1e-12);
	n = wl_ticks_linear(-3.7, 12.2, 9, t, WL_TICKS_MAX);
	assert_int_equal(n, 8); /* -2, 0, ..., 12 */
	assert_true(t[0] == -2 && t[7] == 12);
	/* zero is exactly zero, not 1e-17 (0.1 steps do not add up exactly) */
	n = wl_ticks_linear(-0.3, 0.3, 7, t, WL_TICKS_MAX);
	assert_int_equal(n, 7);
	assert_true(t[3] == 0.0 && !signbit(t[3]));
	n = wl_ticks_linear(5, 5, 5, t, WL_TICKS_MAX);
	assert_int_equal(n, 1);
	n = wl_ticks_linear(NAN, 1, 5, t, WL_TICKS_MAX);
	assert_int_equal(n, 0);
}

/* Properties over many ranges (common practice for tick generators): within
 * range, at most max_ticks, at least 2 when max >= 3, equal 1-2-5 steps. */
static void test_ticks_linear_properties(void **state)
{
	unsigned s = 12345;
	int k;
	(void)state;
	for (k = 0; k < 2000; k++) {
		double t[WL_TICKS_MAX], lo, hi, step;
		size_t n, i, maxt;
		s = s * 1103515245u + 12345u;
		lo = ((double)(s % 20001) - 10000) * pow(10, (double)(s % 9) - 4) / 1000;
		s = s * 1103515245u + 12345u;
		hi = lo + ((double)(s % 10000) + 1) * pow(10, (double)(s % 7) - 3) / 1000;
		maxt = 3 + s % 8;
		n = wl_ticks_linear(lo, hi, maxt, t, WL_TICKS_MAX);
		assert_true(n >= 2);
		step = t[1] - t[0];
		assert_true(is_125_step(step));
		if (n > maxt) {
			/* allowed only when the next coarser 1-2-5 step would leave < 2 ticks */
			double e = pow(10, floor(log10(step) + 1e-9)), f = step / e;
			double coarser = (f < 1.5 ? 2 : f < 3 ? 5 : 10) * e;
			assert_true(floor(hi / coarser + 1e-9) - ceil(lo / coarser - 1e-9) + 1 < 2);
		}
		for (i = 0; i < n; i++) {
			assert_true(t[i] >= lo - 1e-9 * step && t[i] <= hi + 1e-9 * step);
			if (i)
				assert_true(fabs(t[i] - t[i - 1] - step) < 1e-6 * step);
		}
	}
}

/* Reference: matplotlib 3.6.3 (Debian python3-matplotlib; tests/data/references.md,
 * "Plot scales"; tests/tools/regen-plot-scales.py),
 * SymmetricalLogTransform(base=10, linthresh=0.5, linscale=1).transform of
 * [0.1, 0.5, 1, 5, -50] = [0.11111111, 0.55555556, 0.70607055, 1.05555556, -1.55555556]. */
static void test_symlog_transform(void **state)
{
	const double x[5] = {0.1, 0.5, 1, 5, -50};
	const double ref[5] = {0.11111111, 0.55555556, 0.70607055, 1.05555556, -1.55555556};
	int i;
	(void)state;
	for (i = 0; i < 5; i++) {
		assert_true(fabs(wl_symlog(x[i], 0.5) - ref[i]) < 1e-7);
		assert_true(fabs(wl_symlog_inv(wl_symlog(x[i], 0.5), 0.5) - x[i]) <
		            1e-12 * fmax(1, fabs(x[i])));
	}
	assert_true(wl_symlog(0, 0.5) == 0);
	/* monotone across the threshold */
	for (i = -2000; i < 2000; i++)
		assert_true(wl_symlog((i + 1) * 0.001, 0.5) > wl_symlog(i * 0.001, 0.5));
}

static void test_symlog_ticks(void **state)
{
	double t[WL_TICKS_MAX];
	const double want[7] = {-100, -10, -1, 0, 1, 10, 100};
	size_t n, i;
	(void)state;
	n = wl_ticks_symlog(-150, 150, 1, 9, t, WL_TICKS_MAX);
	assert_int_equal(n, 7);
	for (i = 0; i < n; i++)
		assert_true(fabs(t[i] - want[i]) < 1e-9 * fmax(1, fabs(want[i])));
	/* many decades are thinned to fit */
	n = wl_ticks_symlog(-1e9, 1e9, 1, 9, t, WL_TICKS_MAX);
	assert_true(n <= 9 && n >= 5);
	for (i = 1; i < n; i++)
		assert_true(t[i] > t[i - 1]);
	/* a threshold that is not a power of ten (a body diameter) still gives
	 * round decades: +-0.1, +-1, +-10, not +-0.14, +-1.4, +-14 */
	{
		const double want2[7] = {-10, -1, -0.1, 0, 0.1, 1, 10};
		n = wl_ticks_symlog(-30, 30, 0.14, 9, t, WL_TICKS_MAX);
		assert_int_equal(n, 7);
		for (i = 0; i < n; i++)
			assert_true(fabs(t[i] - want2[i]) < 1e-12 * fmax(1, fabs(want2[i])));
	}
	/* inside the linear part: linear ticks */
	n = wl_ticks_symlog(-0.4, 0.4, 1, 9, t, WL_TICKS_MAX);
	assert_true(n >= 3);
	assert_true(fabs(t[1] - t[0] - (t[2] - t[1])) < 1e-12);
}

/* Reference (tests/data/references.md, "Plot scales"): matplotlib 3.6.3 cm.get_cmap('viridis') at t = 0,
 * 0.37, 0.5, 0.8, 1.0 (the 256-entry table, nearest entry). */
static void test_viridis(void **state)
{
	const double t[5] = {0, 0.37, 0.5, 0.8, 1.0};
	const double ref[5][3] = {{0.267004, 0.004874, 0.329415},
	                          {0.175841, 0.441290, 0.557685},
	                          {0.127568, 0.566949, 0.550556},
	                          {0.477504, 0.821444, 0.318195},
	                          {0.993248, 0.906157, 0.143936}};
	double rgb[3];
	int i, k;
	(void)state;
	for (i = 0; i < 5; i++) {
		wl_cmap_viridis(t[i], rgb);
		for (k = 0; k < 3; k++)
			assert_true(fabs(rgb[k] - ref[i][k]) < 0.01);
	}
	wl_cmap_viridis(-3, rgb);
	assert_true(fabs(rgb[0] - 0.267004) < 1e-6);
	wl_cmap_viridis(NAN, rgb);
	assert_true(rgb[0] == rgb[1] && rgb[1] == rgb[2]);
}

static void test_tick_labels_locale(void **state)
{
	char b[32];
	int have = setlocale(LC_NUMERIC, "de_DE.UTF-8") != NULL;
	(void)state;
	if (!have)
		print_message("de_DE.UTF-8 not installed: the label test runs in the C locale only\n");
	assert_string_equal(wl_tick_label(b, 0.1 + 0.2), "0.3");
	assert_string_equal(wl_tick_label(b, -0.0), "0");
	assert_string_equal(wl_tick_label(b, 12.5), "12.5");
	assert_string_equal(wl_tick_label(b, -0.002), "-0.002");
	assert_string_equal(wl_tick_label(b, 250), "250");
	assert_string_equal(wl_tick_label(b, 10), "10");
	assert_string_equal(wl_tick_label(b, 400), "400");
	assert_string_equal(wl_tick_label(b, 1e-7), "1e-07");
	setlocale(LC_NUMERIC, "C");
}

/* ---- files ---- */

static long file_size(const char *p)
{
	struct stat st;
	return stat(p, &st) == 0 ? (long)st.st_size : -1;
}

static void check_png(const char *path, unsigned w, unsigned h)
{
	unsigned char b[24];
	FILE *fp = fopen(path, "rb");
	static const unsigned char sig[8] = {0x89, 'P', 'N', 'G', '\r', '\n', 0x1a, '\n'};
	assert_non_null(fp);
	assert_int_equal(fread(b, 1, 24, fp), 24);
	fclose(fp);
	/* PNG signature and the IHDR chunk first (ISO/IEC 15948, 5.2 and 11.2.2) */
	assert_memory_equal(b, sig, 8);
	assert_memory_equal(b + 12, "IHDR", 4);
	assert_int_equal(((unsigned)b[16] << 24 | b[17] << 16 | b[18] << 8 | b[19]), w);
	assert_int_equal(((unsigned)b[20] << 24 | b[21] << 16 | b[22] << 8 | b[23]), h);
}

static void check_svg(const char *path)
{
	char *text = NULL;
	size_t len = 0;
	assert_int_equal(wl_read_file(path, 1 << 26, &text, &len, NULL), WL_OK);
	assert_true(strncmp(text, "<?xml", 5) == 0);
	assert_non_null(strstr(text, "<svg"));
	assert_non_null(strstr(text, "</svg>"));
	free(text);
}

static int count_tmp(const char *dir)
{
	DIR *d = opendir(dir);
	struct dirent *e;
	int n = 0;
	if (!d)
		return -1;
	while ((e = readdir(d)))
		n += strstr(e->d_name, ".tmp-") != NULL;
	closedir(d);
	return n;
}

static void test_plot_files(void **state)
{
	double x[50], y[50], lo[50], hi[50], c[50];
	wl_style st = {{0.1, 0.3, 0.8}, 1, 1.5, 0, WL_MARK_NONE, 0, 0};
	wl_style band = {{0.9, 0.4, 0.1}, 0.2, 0, 0, WL_MARK_NONE, 0, 0};
	wl_plot *p = wl_plot_create();
	char path[400];
	wl_err err;
	int i;
	(void)state;
	assert_non_null(p);
	for (i = 0; i < 50; i++) {
		x[i] = i * 0.1;
		y[i] = sin(x[i]);
		lo[i] = y[i] - 0.1;
		hi[i] = y[i] + 0.1;
		c[i] = x[i];
	}
	wl_plot_title(p, "test plot");
	wl_plot_xlabel(p, "t (s)");
	wl_plot_ylabel(p, "y (m)");
	assert_int_equal(wl_plot_add_band(p, 1, 1, 2, &band, "band", &err), WL_OK);
	assert_int_equal(wl_plot_add_line(p, x, y, 50, &st, "line", &err), WL_OK);
	assert_int_equal(wl_plot_add_errorbars(p, x, y, lo, hi, 10, &st, "errors", &err), WL_OK);
	assert_int_equal(wl_plot_add_cline(p, x, y, c, 50, 0, 5, 2, "time (s)", &err), WL_OK);
	snprintf(path, sizeof path, "%s/a.svg", tmpdir);
	assert_int_equal(wl_plot_save(&p, 1, 640, 480, path, &err), WL_OK);
	check_svg(path);
	snprintf(path, sizeof path, "%s/a.png", tmpdir);
	assert_int_equal(wl_plot_save(&p, 1, 640, 480, path, &err), WL_OK);
	check_png(path, 640, 480);
	/* unknown extension and an unwritable folder fail cleanly, no temp left */
	snprintf(path, sizeof path, "%s/a.gif", tmpdir);
	assert_int_equal(wl_plot_save(&p, 1, 640, 480, path, &err), WL_EINVAL);
	assert_non_null(strstr(err.msg, "a.gif"));
	assert_int_equal(wl_plot_save(&p, 1, 640, 480, "/nonexistent-dir/a.svg", &err), WL_EIO);
	assert_int_equal(count_tmp(tmpdir), 0);
	wl_plot_destroy(p);
	wl_plot_destroy(NULL);
}

static void test_layout_equal_aspect_and_symlog(void **state)
{
	double x[2] = {0, 2}, y[2] = {0, 1}, xl[2], yl[2], xt[WL_TICKS_MAX], yt[WL_TICKS_MAX];
	size_t nx, ny;
	wl_plot *p = wl_plot_create();
	(void)state;
	assert_int_equal(wl_plot_add_line(p, x, y, 2, NULL, NULL, NULL), WL_OK);
	wl_plot_equal_aspect(p, 1);
	wl_plot_layout(p, 400 + 64 + 16, 400 + 26 + 42, xl, yl, xt, &nx, yt, &ny);
	/* square plot area: both spans equal, and the data inside */
	assert_true(fabs((xl[1] - xl[0]) - (yl[1] - yl[0])) < 1e-9);
	assert_true(xl[0] <= 0 && xl[1] >= 2 && yl[0] <= 0 && yl[1] >= 1);
	wl_plot_destroy(p);

	p = wl_plot_create();
	{
		double ry[3] = {-40, 0.05, 300}, rx[3] = {0, 1, 2};
		size_t i;
		assert_int_equal(wl_plot_add_scatter(p, rx, ry, 3, NULL, NULL, NULL), WL_OK);
		wl_plot_yscale(p, WL_SCALE_SYMLOG, 0.1);
		wl_plot_layout(p, 640, 440, xl, yl, xt, &nx, yt, &ny);
		assert_true(yl[0] < -40 && yl[1] > 300);
		for (i = 0; i < ny; i++)
			assert_true(yt[i] == 0 ||
			            fabs(log10(fabs(yt[i]) / 0.1) - round(log10(fabs(yt[i]) / 0.1))) < 1e-9);
	}
	wl_plot_destroy(p);
}

/* ---- per-run plots ---- */

static void write_text(const char *path, const char *text)
{
	FILE *fp = fopen(path, "w");
	assert_non_null(fp);
	fputs(text, fp);
	fclose(fp);
}

/* An invented run: robot 7 circles counter-clockwise on r = 0.4 m about
 * (1, 0.5) for 20 s at 30 fps, the first 2 s left out as "start". */
static void make_clip_folder(const char *dir, int nrows)
{
	char path[400];
	FILE *fp;
	int i;
	snprintf(path, sizeof path, "%s/clean.csv", dir);
	fp = fopen(path, "w");
	assert_non_null(fp);
	fprintf(fp, "t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,vx_mps,vy_mps,segment,status,"
	            "cut\n");
	for (i = 0; i < nrows; i++) {
		double t = i / 30.0, a = 0.3 * t, h = atan2(cos(a), -sin(a));
		fprintf(fp, "%.4f,%d,7,%.5f,%.5f,%.5f,0.12,0.3,0,0,%d,measured,%s\n", t, i, 1 + 0.4 * cos(a),
		        0.5 + 0.4 * sin(a), h, t < 2 ? -1 : 0, t < 2 ? "start" : "");
	}
	fclose(fp);
	snprintf(path, sizeof path, "%s/summary.json", dir);
	write_text(path, "{\"format\":\"wakeline "
	                 "summary\",\"runs\":[{\"id\":7,\"segment\":0,\"headline\":true,\"radius_m\":0.4,"
	                 "\"curvature_per_m\":2.5,\"curvature_ci95_per_m\":[2.4,2.6],\"straight\":false,"
	                 "\"centre_x_m\":1,\"centre_y_m\":0.5}]}\n");
}

static void test_clip_plots(void **state)
{
	double outline[4][2] = {{0, 0}, {2, 0}, {2, 1.2}, {0, 1.2}}, markers[2][2] = {{0.1, 0.1}, {1.9, 1.1}};
	const char *ids[2] = {"A0", "A1"};
	wl_report_scene sc = {.n_outline = 4,
	                      .outline_m = (const double(*)[2])outline,
	                      .n_markers = 2,
	                      .markers_m = (const double(*)[2])markers,
	                      .marker_ids = ids,
	                      .body_diameter_m = 0.1};
	char path[400];
	wl_err err;
	(void)state;
	make_clip_folder(tmpdir, 600);
	assert_int_equal(wl_report_clip_plots(tmpdir, &sc, &err), WL_OK);
	snprintf(path, sizeof path, "%s/path_m.svg", tmpdir);
	check_svg(path);
	snprintf(path, sizeof path, "%s/heading.svg", tmpdir);
	check_svg(path);
	snprintf(path, sizeof path, "%s/path_m.png", tmpdir);
	check_png(path, 640, 520);
	snprintf(path, sizeof path, "%s/heading.png", tmpdir);
	check_png(path, 640, 560);
	/* a long clip is thinned: the SVG stays small whatever the row count */
	make_clip_folder(tmpdir, 90000);
	assert_int_equal(wl_report_clip_plots(tmpdir, NULL, &err), WL_OK);
	snprintf(path, sizeof path, "%s/path_m.svg", tmpdir);
	assert_true(file_size(path) > 1000 && file_size(path) < 4000000);
	/* errors name the file */
	snprintf(path, sizeof path, "%s/clean.csv", tmpdir);
	write_text(path, "t_s,frame,id\n0,0,1\n");
	assert_int_equal(wl_report_clip_plots(tmpdir, NULL, &err), WL_EFORMAT);
	assert_non_null(strstr(err.msg, "clean.csv:1"));
	assert_non_null(strstr(err.msg, "x_m"));
}

/* ---- run page ---- */

/* An invented run: robot 5 circles counter-clockwise on r = 0.5 m about
 * (1.2, 0.7) at 0.15 m/s for 30 s at 30 fps, its heading oscillating 10 deg
 * at 0.8 Hz about the tangent, 0.3 mm of seeded noise on the positions; the
 * first 2 s are left out as "start".  summary.json is written from
 * wl_measure_run over the segment, as the measure stage would. */
static void make_run_folder(const char *dir, int with_budget)
{
	char path[400];
	FILE *fp;
	int i, n = 900, m = 0;
	static double t[900], x[900], y[900], h[900], v[900], yr[900];
	static unsigned char meas[900];
	unsigned long long s = 12345;
	wl_measure_input in = {0};
	wl_measure_opts opt;
	wl_measure_result r;
	cJSON *root = cJSON_CreateObject(), *runs, *run = cJSON_CreateObject();
	cJSON_AddStringToObject(root, "format", "wakeline summary");
	cJSON_AddNumberToObject(root, "format_version", 1);
	runs = cJSON_AddArrayToObject(root, "runs");
	snprintf(path, sizeof path, "%s/clean.csv", dir);
	fp = fopen(path, "w");
	assert_non_null(fp);
	fprintf(fp, "t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,vx_mps,vy_mps,segment,status,"
	            "cut\n");
	for (i = 0; i < n; i++) {
		double tt = i / 30.0, a = 0.3 * tt, wob = 10 * WL_PI / 180 * sin(2 * WL_PI * 0.8 * tt), nx,
		       ny;
		s = s * 6364136223846793005ULL + 1442695040888963407ULL;
		nx = ((double)(s >> 11) / 9007199254740992.0 - 0.5) * 0.0006;
		s = s * 6364136223846793005ULL + 1442695040888963407ULL;
		ny = ((double)(s >> 11) / 9007199254740992.0 - 0.5) * 0.0006;
		double px = 1.2 + 0.5 * cos(a) + nx, py = 0.7 + 0.5 * sin(a) + ny,
		       hd = atan2(sin(a + WL_PI / 2 + wob), cos(a + WL_PI / 2 + wob));
		/* the values as the file holds them, so that the summary is the
		 * one the measure stage would make from it */
		tt = round(tt * 1e4) / 1e4, px = round(px * 1e6) / 1e6, py = round(py * 1e6) / 1e6;
		hd = round(hd * 1e6) / 1e6;
		fprintf(fp, "%.4f,%d,5,%.6f,%.6f,%.6f,0.15,0.3,0,0,%d,measured,%s\n", tt, i, px, py, hd,
		        tt < 2 ? -1 : 0, tt < 2 ? "start" : "");
		if (tt >= 2) {
			t[m] = tt, x[m] = px, y[m] = py, h[m] = hd, v[m] = 0.15, yr[m] = 0.3, meas[m] = 1;
			m++;
		}
	}
	fclose(fp);
	in.n = (size_t)m, in.t_s = t, in.x_m = x, in.y_m = y, in.heading_rad = h, in.speed_mps = v;
	in.yaw_rate_radps = yr, in.measured = meas;
	wl_measure_opts_init(&opt);
	assert_int_equal(wl_measure_run(&in, &opt, &r, NULL), WL_OK);
	cJSON_AddNumberToObject(run, "id", 5);
	cJSON_AddNumberToObject(run, "segment", 0);
	cJSON_AddTrueToObject(run, "headline");
	cJSON_AddBoolToObject(run, "straight", r.straight);
	cJSON_AddNumberToObject(run, "curvature_per_m", r.curvature_per_m);
	wl_json_add_numbers(run, "curvature_ci95_per_m", r.curvature_ci95_per_m, 2);
	cJSON_AddNumberToObject(run, "radius_m", r.radius_m);
	cJSON_AddNumberToObject(run, "centre_x_m", r.centre_x_m);
	cJSON_AddNumberToObject(run, "centre_y_m", r.centre_y_m);
	cJSON_AddNumberToObject(run, "fit_rms_m", r.fit_rms_m);
	cJSON_AddNumberToObject(run, "mean_speed_mps", r.mean_speed_mps);
	cJSON_AddNumberToObject(run, "yaw_osc_freq_hz", r.yaw_osc_freq_hz);
	cJSON_AddNumberToObject(run, "yaw_osc_amp_deg", r.yaw_osc_amp_deg);
	cJSON_AddNumberToObject(run, "tracked_fraction", 1);
	if (with_budget) {
		cJSON_AddStringToObject(run, "verdict", "check");
		cJSON *reasons = cJSON_AddArrayToObject(run, "verdict_reasons");
		cJSON_AddItemToArray(reasons, cJSON_CreateString("camera moved at 4.2 s"));
		cJSON *b = cJSON_AddObjectToObject(run, "budget"),
		      *sp = cJSON_AddObjectToObject(b, "mean_speed_mps");
		cJSON_AddNumberToObject(sp, "total_se", 0.0021);
		cJSON *src = cJSON_CreateObject();
		cJSON_AddStringToObject(src, "source", "fit");
		cJSON_AddNumberToObject(src, "se", 0.0021);
		cJSON_AddNumberToObject(src, "share", 1);
		cJSON_AddItemToArray(cJSON_AddArrayToObject(sp, "sources"), src);
	}
	cJSON_AddItemToArray(runs, run);
	snprintf(path, sizeof path, "%s/summary.json", dir);
	assert_int_equal(wl_json_save(path, root, NULL), WL_OK);
	cJSON_Delete(root);
}

/* The data block of a page, parsed. */
static cJSON *page_data(const char *path)
{
	char *text = NULL, *a, *b;
	size_t len;
	cJSON *d;
	assert_int_equal(wl_read_file(path, 1 << 26, &text, &len, NULL), WL_OK);
	a = strstr(text, "<script type=\"application/json\" id=\"wl-data\">");
	assert_non_null(a);
	a = strchr(a, '>') + 1;
	b = strstr(a, "</script>");
	assert_non_null(b);
	assert_null(memchr(a, '<', (size_t)(b - a)));
	assert_non_null(strstr(text, "default-src 'none'"));
	d = cJSON_ParseWithLength(a, (size_t)(b - a));
	assert_non_null(d);
	free(text);
	return d;
}

static void test_run_page(void **state)
{
	char path[400], want[WL_NUMFMT_BUF];
	cJSON *d, *run, *sp, *f, *p, *res, *mm, *sum;
	double best = -1, fbest = NAN, ss = 0, T = 28, k, lo, hi;
	int i, n;
	wl_report_scene scene;
	wl_err err;
	(void)state;
	make_run_folder(tmpdir, 1);
	snprintf(path, sizeof path, "%s/process.log", tmpdir);
	write_text(path, "wakeline process c.mp4\nwarning: <3> rows rejected\n");
	/* without the measure's functions: the numbers, no spectrum */
	assert_int_equal(wl_report_run_page(tmpdir, NULL, &err), WL_OK);
	snprintf(path, sizeof path, "%s/run.html", tmpdir);
	d = page_data(path);
	run = cJSON_GetArrayItem(cJSON_GetObjectItem(d, "runs"), 0);
	assert_non_null(cJSON_GetObjectItem(run, "numbers"));
	assert_null(cJSON_GetObjectItem(run, "spectrum"));
	cJSON_Delete(d);
	memset(&scene, 0, sizeof scene);
	scene.analyse = wl_process_analyse_run; /* as process and merge give it */
	assert_int_equal(wl_report_run_page(tmpdir, &scene, &err), WL_OK);
	d = page_data(path);
	run = cJSON_GetArrayItem(cJSON_GetObjectItem(d, "runs"), 0);
	assert_string_equal(cJSON_GetObjectItem(run, "id")->valuestring, "5");
	sum = cJSON_GetObjectItem(run, "summary");
	/* the spectrum peaks at the invented 0.8 Hz (within a bin, 1/(2T)), and
	 * the recomputed fitted frequency is the summary's */
	sp = cJSON_GetObjectItem(run, "spectrum");
	assert_non_null(sp);
	f = cJSON_GetObjectItem(sp, "f");
	p = cJSON_GetObjectItem(sp, "p");
	n = cJSON_GetArraySize(f);
	assert_true(n > 100 && n == cJSON_GetArraySize(p));
	for (i = 0; i < n; i++)
		if (cJSON_GetArrayItem(p, i)->valuedouble > best)
			best = cJSON_GetArrayItem(p, i)->valuedouble,
			fbest = cJSON_GetArrayItem(f, i)->valuedouble;
	assert_true(fabs(fbest - 0.8) <= 0.5 / T + 1e-9);
	assert_true(fabs(cJSON_GetObjectItem(sp, "peak_hz")->valuedouble -
	                 cJSON_GetObjectItem(sum, "yaw_osc_freq_hz")->valuedouble) < 1e-9);
	assert_true(fabs(cJSON_GetObjectItem(sum, "yaw_osc_freq_hz")->valuedouble - 0.8) < 0.01);
	/* residuals: their RMS is the summary's fit_rms_m */
	res = cJSON_GetObjectItem(run, "resid");
	mm = cJSON_GetObjectItem(res, "mm");
	n = cJSON_GetArraySize(mm);
	assert_int_equal(n, 840);
	for (i = 0; i < n; i++)
		ss += pow(cJSON_GetArrayItem(mm, i)->valuedouble, 2);
	assert_true(fabs(sqrt(ss / n) / (1000 * cJSON_GetObjectItem(sum, "fit_rms_m")->valuedouble) - 1) <
	            0.01);
	/* the numbers: curvature ± half its interval by core/numfmt; the speed
	 * with the budget's 1.96 x total_se */
	k = cJSON_GetObjectItem(sum, "curvature_per_m")->valuedouble;
	/* the page's run object has the per-run table's columns */
	lo = cJSON_GetObjectItem(sum, "curvature_ci95_per_m_lo")->valuedouble;
	hi = cJSON_GetObjectItem(sum, "curvature_ci95_per_m_hi")->valuedouble;
	{
		cJSON *nums = cJSON_GetObjectItem(run, "numbers"), *row;
		int seen = 0;
		cJSON_ArrayForEach(row, nums)
		{
			const char *label = cJSON_GetArrayItem(row, 0)->valuestring,
			           *text = cJSON_GetArrayItem(row, 1)->valuestring;
			if (!strcmp(label, "curvature (1/m)")) {
				assert_string_equal(text, wl_numfmt_pm(want, k, 0.5 * (hi - lo)));
				seen++;
			} else if (!strcmp(label, "mean speed (m/s)")) {
				assert_string_equal(text, "0.150 \xc2\xb1 0.004");
				seen++;
			}
		}
		assert_int_equal(seen, 2);
	}
	assert_string_equal(cJSON_GetObjectItem(sum, "verdict")->valuestring, "check");
	/* the log comes along, the robot's series whole (900 rows, under the cap) */
	assert_string_equal(cJSON_GetArrayItem(cJSON_GetObjectItem(d, "log"), 1)->valuestring,
	                    "warning: <3> rows rejected");
	assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(
	                         cJSON_GetArrayItem(cJSON_GetObjectItem(d, "robots"), 0), "t")),
	                 900);
	cJSON_Delete(d);

	/* without clean.csv: the numbers, no plots' data */
	snprintf(path, sizeof path, "%s/clean.csv", tmpdir);
	unlink(path);
	assert_int_equal(wl_report_run_page(tmpdir, NULL, &err), WL_OK);
	snprintf(path, sizeof path, "%s/run.html", tmpdir);
	d = page_data(path);
	run = cJSON_GetArrayItem(cJSON_GetObjectItem(d, "runs"), 0);
	assert_non_null(cJSON_GetObjectItem(run, "numbers"));
	assert_null(cJSON_GetObjectItem(run, "spectrum"));
	assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(d, "robots")), 0);
	cJSON_Delete(d);
	/* a broken summary is an error naming the file */
	snprintf(path, sizeof path, "%s/summary.json", tmpdir);
	write_text(path, "{\"runs\": 3}");
	assert_int_not_equal(wl_report_run_page(tmpdir, NULL, &err), WL_OK);
	assert_non_null(strstr(err.msg, "summary.json"));
}

/* wl_measure_periodogram: a sine of 1.25 Hz peaks in its bin; power at
 * frequencies k / (nfft dt) */
static void test_periodogram(void **state)
{
	static double t[600], v[600], f[1100], p[1100];
	size_t nb = 0, i, best = 0;
	(void)state;
	for (i = 0; i < 600; i++) {
		t[i] = i / 30.0;
		v[i] = sin(2 * WL_PI * 1.25 * t[i]) + 0.1;
	}
	assert_int_equal(wl_measure_periodogram(t, v, 600, f, p, 1100, &nb, NULL), WL_OK);
	assert_int_equal(nb, 1024); /* nfft 2048 >= 2n, bins 1 .. nfft/2 */
	for (i = 0; i < nb; i++)
		if (p[i] > p[best])
			best = i;
	/* dt = 1/30 s: bins 30/2048 Hz apart from the first */
	assert_true(fabs(f[0] - 30.0 / 2048) < 1e-12 && fabs(f[1] - f[0] - 30.0 / 2048) < 1e-12);
	assert_true(fabs(f[best] - 1.25) <= 0.5 * 30.0 / 2048 + 1e-12);
	assert_int_not_equal(wl_measure_periodogram(t, v, 10, f, p, 1100, &nb, NULL), WL_OK);
}

static void test_scene_load(void **state)
{
	wl_report_scene_buf sb;
	char path[400];
	wl_err err;
	(void)state;
	snprintf(path, sizeof path, "%s/cal.json", tmpdir);
	write_text(path,
	           "{\"format\": \"wakeline-calibration\", \"format_version\": 1,"
	           " \"tank_outline_m\": [[0, 0], [2.4, 0], [2.4, 1.4], [0, 1.4]],"
	           " \"points\": [{\"id\": \"M1\", \"u_px\": 10, \"v_px\": 20, \"x_m\": 0.1, \"y_m\": 0.2},"
	           " {\"id\": \"M2\", \"u_px\": 900, \"v_px\": 500, \"x_m\": 2.3, \"y_m\": 1.3},"
	           " {\"id\": \"M2.c0\", \"u_px\": 905, \"v_px\": 505, \"x_m\": 2.32, \"y_m\": 1.32}]}\n");
	assert_int_equal(wl_report_scene_load(path, &sb, &err), WL_OK);
	assert_int_equal(sb.scene.n_outline, 4);
	assert_true(sb.scene.outline_m[2][0] == 2.4 && sb.scene.outline_m[2][1] == 1.4);
	assert_int_equal(sb.scene.n_markers, 2);
	assert_string_equal(sb.scene.marker_ids[1], "M2"); /* the corner point is left out */
	wl_report_scene_release(&sb);
	/* a point without its numbers breaks CAL.json's one rule (formats/cal.h) */
	write_text(path, "{\"format\": \"wakeline-calibration\", \"tank_outline_m\": [],"
	                 " \"points\": [{\"id\": \"bad\"}]}\n");
	assert_int_equal(wl_report_scene_load(path, &sb, &err), WL_EFORMAT);
	assert_non_null(strstr(err.msg, "points[0]"));
	wl_report_scene_release(&sb);
	snprintf(path, sizeof path, "%s/nope.json", tmpdir);
	assert_int_not_equal(wl_report_scene_load(path, &sb, &err), WL_OK);
	assert_int_equal(sb.scene.n_outline, 0);
	assert_non_null(strstr(err.msg, "nope.json"));
	wl_report_scene_release(&sb);
}

/* ---- sweep and html ---- */

static char *xs(const char *s)
{
	char *d = strdup(s);
	assert_non_null(d);
	return d;
}

static void make_runs(wl_report_runs *t, size_t n)
{
	const char *cols[] = {"gain",
	                      "shape",
	                      "headline",
	                      "radius_m",
	                      "curvature_per_m",
	                      "curvature_ci95_per_m_lo",
	                      "curvature_ci95_per_m_hi",
	                      "straight",
	                      "radius_body_diameters",
	                      "verdict",
	                      "verdict_reasons"};
	size_t i, j;
	wl_report_runs_init(t);
	t->ncols = 11;
	t->nparams = 2;
	t->cols = calloc(11, sizeof *t->cols);
	for (j = 0; j < 11; j++)
		t->cols[j] = xs(cols[j]);
	t->rows = calloc(n + 1, sizeof *t->rows);
	for (i = 0; i <= n; i++) {
		wl_report_row *r = &t->rows[t->nrows++];
		char b[11][64];
		double k = -3 + (double)i;
		snprintf(b[0], 64, "%g", 0.1 * (double)i);
		snprintf(b[1], 64, "%s", i % 2 ? "fin" : "<disc>");
		snprintf(b[2], 64, "true");
		snprintf(b[3], 64, "%g", k != 0 ? 1 / k : 0);
		snprintf(b[4], 64, "%g", k);
		snprintf(b[5], 64, "%g", k - 0.3);
		snprintf(b[6], 64, "%g", k + 0.3);
		snprintf(b[7], 64, "%s", k == 0 ? "true" : "false");
		snprintf(b[8], 64, "%g", k != 0 ? 1 / k / 0.1 : 0);
		/* run 1 needs a check, run 2 was rejected */
		snprintf(b[9], 64, "%s", i == 1 ? "check" : i == 2 ? "reject" : "ok");
		snprintf(b[10], 64, "%s",
		         i == 1   ? "1.5% of rows rejected as outliers"
		         : i == 2 ? "tracked in only 40% of the rows"
		                  : "");
		if (k == 0)
			b[3][0] = b[8][0] = '\0';
		r->clip = xs(i == n ? "broken.mp4" : "c.mp4");
		r->folder = xs("clips/c_mp4");
		r->status = xs(i == n ? "failed" : "ok");
		r->error = xs(i == n ? "broken.mp4: cannot decode <frame 3>" : "");
		r->cells = calloc(11, sizeof *r->cells);
		for (j = 0; j < 11; j++)
			r->cells[j] = xs(b[j]);
	}
}

static int count_str(const char *hay, const char *needle)
{
	int n = 0;
	for (; (hay = strstr(hay, needle)); hay++)
		n++;
	return n;
}

static void test_sweep_and_html(void **state)
{
	wl_report_runs t;
	wl_report_sweep_opts o = {"gain", "shape", 0};
	char path[400], *text = NULL;
	size_t len;
	int written = 0;
	wl_err err;
	(void)state;
	make_runs(&t, 7);
	assert_int_equal(wl_report_runs_col(&t, "gain"), 0);
	assert_int_equal(wl_report_runs_col(&t, "nope"), -1);
	assert_int_equal(wl_report_sweep_plots(&t, &o, tmpdir, &written, &err), WL_OK);
	assert_int_equal(written, 1);
	snprintf(path, sizeof path, "%s/sweep_curvature.svg", tmpdir);
	check_svg(path);
	snprintf(path, sizeof path, "%s/sweep_radius.png", tmpdir);
	check_png(path, 640, 440);
	/* categorical x */
	o.x_col = "shape";
	o.group_col = NULL;
	assert_int_equal(wl_report_sweep_plots(&t, &o, tmpdir, &written, &err), WL_OK);
	o.x_col = "nothere";
	assert_int_equal(wl_report_sweep_plots(&t, &o, tmpdir, &written, &err), WL_EINVAL);
	assert_non_null(strstr(err.msg, "nothere"));
	assert_int_equal(wl_report_html(&t, &o, tmpdir, "sweep <test>", 1, &err), WL_OK);
	snprintf(path, sizeof path, "%s/report.html", tmpdir);
	assert_int_equal(wl_read_file(path, 1 << 24, &text, &len, NULL), WL_OK);
	{
		/* the data block: the 7 runs with the interval texts of core/numfmt */
		char *a = strstr(text, "<script type=\"application/json\" id=\"wl-data\">"), *b;
		cJSON *d, *rows;
		assert_non_null(a);
		a = strchr(a, '>') + 1;
		b = strstr(a, "</script>");
		assert_non_null(b);
		d = cJSON_ParseWithLength(a, (size_t)(b - a));
		assert_non_null(d);
		rows = cJSON_GetObjectItem(d, "rows");
		assert_int_equal(cJSON_GetArraySize(rows), 7);
		/* clip, folder; 11 columns (verdict and verdict_reasons are the measure
		 * stage's own); the two shown as value ± half-interval */
		assert_int_equal(cJSON_GetArraySize(cJSON_GetArrayItem(rows, 0)), 2 + 11 + 2);
		/* k = -3, interval [-3.3, -2.7]: curvature -3.00 ± 0.30, radius
		 * -1/3 with half of |1/-3.3 - 1/-2.7| = 0.0337 -> -0.333 ± 0.034 */
		assert_string_equal(cJSON_GetArrayItem(cJSON_GetArrayItem(rows, 0), 13)->valuestring,
		                    "-3.00 \xc2\xb1 0.30");
		assert_string_equal(cJSON_GetArrayItem(cJSON_GetArrayItem(rows, 0), 14)->valuestring,
		                    "-0.333 \xc2\xb1 0.034");
		assert_string_equal(cJSON_GetArrayItem(cJSON_GetArrayItem(rows, 3), 14)->valuestring,
		                    "straight");
		assert_string_equal(cJSON_GetObjectItem(d, "x_col")->valuestring, "nothere"); /* as given */
		assert_true(fabs(cJSON_GetObjectItem(d, "body_m")->valuedouble - 0.1) < 1e-9);
		/* no '<' inside the block: "<disc>" is written \u003cdisc> */
		assert_null(memchr(a, '<', (size_t)(b - a)));
		assert_string_equal(cJSON_GetArrayItem(cJSON_GetArrayItem(rows, 0), 3)->valuestring,
		                    "<disc>");
		cJSON_Delete(d);
	}
	assert_int_equal(count_str(text, "<tr class=\"failure\">"), 1);
	assert_null(strstr(text, "<disc>"));
	assert_non_null(strstr(text, "cannot decode &lt;frame 3&gt;"));
	assert_non_null(strstr(text, "default-src 'none'"));
	/* the only URL is the SVG namespace, a name that is never fetched */
	assert_int_equal(count_str(text, "http://"), count_str(text, "http://www.w3.org/2000/svg"));
	assert_null(strstr(text, "https://"));
	free(text);
	wl_report_runs_release(&t);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_ticks_linear_examples),
	        cmocka_unit_test(test_ticks_linear_properties),
	        cmocka_unit_test(test_symlog_transform),
	        cmocka_unit_test(test_symlog_ticks),
	        cmocka_unit_test(test_viridis),
	        cmocka_unit_test(test_tick_labels_locale),
	        cmocka_unit_test(test_plot_files),
	        cmocka_unit_test(test_layout_equal_aspect_and_symlog),
	        cmocka_unit_test(test_clip_plots),
	        cmocka_unit_test(test_scene_load),
	        cmocka_unit_test(test_sweep_and_html),
	        cmocka_unit_test(test_run_page),
	        cmocka_unit_test(test_periodogram),
	};
	int rc = cmocka_run_group_tests(tests, setup_dir, teardown_dir);
	wl_report_release_caches();
	return rc;
}
