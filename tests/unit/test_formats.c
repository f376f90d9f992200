/*
 * test_formats.c: the file formats of src/formats/: every writer's exact
 * text where it matters (column order, number formats, '.' decimals under a
 * decimal-comma locale), every reader's round trip of what the writer wrote,
 * and the format / version checks every reader makes first.
 */
#define _GNU_SOURCE
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <locale.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "core/afile.h"
#include "formats/cal.h"
#include "formats/clean.h"
#include "formats/raw.h"
#include "formats/summary.h"

static char tmpdir[256];

static int setup(void **state)
{
	(void)state;
	snprintf(tmpdir, sizeof tmpdir, "/tmp/wl-test-formats-XXXXXX");
	return mkdtemp(tmpdir) ? 0 : -1;
}

static int teardown(void **state)
{
	char cmd[300];
	(void)state;
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmpdir);
	return system(cmd) == 0 ? 0 : -1;
}

static char *path_of(const char *name)
{
	static char buf[4][400];
	static int k;
	k = (k + 1) % 4;
	snprintf(buf[k], sizeof buf[k], "%s/%s", tmpdir, name);
	return buf[k];
}

static char *slurp(const char *path)
{
	char *text = NULL;
	size_t len;
	assert_int_equal(wl_read_file(path, 1 << 22, &text, &len, NULL), WL_OK);
	return text;
}

/* ---- RAW.csv ---- */

typedef struct {
	wl_raw_row rows[8];
	int n;
} raw_rows;

static wl_status keep_raw(const wl_raw_row *r, void *ctx, wl_err *err)
{
	raw_rows *k = ctx;
	(void)err;
	if (k->n < 8)
		k->rows[k->n++] = *r;
	return WL_OK;
}

static void test_raw_round_trip(void **state)
{
	wl_raw_writer *w = NULL;
	wl_raw_row a = {.t_s = 0.033367,
	                .frame = 1,
	                .id = 3,
	                .status = WL_RAW_OK,
	                .u_px = 10.25,
	                .v_px = 20.5,
	                .x_m = 0.125,
	                .y_m = -0.5,
	                .heading_rad = 1.5,
	                .margin = 80.0,
	                .size_px = 41.5,
	                .heading_source = WL_HS_TAG,
	                .hold_score = NAN,
	                .t_detect_s = 0.0412345};
	wl_raw_row h = a, b = {.t_s = 0.033367, .frame = 1, .id = 7, .status = WL_RAW_LOST};
	raw_rows got = {0};
	wl_err err;
	char *text, *p = path_of("raw.csv");
	(void)state;
	/* numbers keep '.' decimals under a decimal-comma locale */
	setlocale(LC_NUMERIC, "de_DE.UTF-8");
	/* held: a pose refined where the detector missed, with its score; no
	 * rolling-shutter time given, so t_detect_s is t_s */
	h.id = 5;
	h.status = WL_RAW_HELD;
	h.margin = NAN;
	h.hold_score = 0.87651;
	h.t_detect_s = NAN;
	assert_int_equal(wl_raw_open(p, &w, NULL), WL_OK);
	wl_raw_put(w, &a);
	wl_raw_put(w, &h);
	wl_raw_put(w, &b);
	assert_int_equal(wl_raw_commit(w, NULL), WL_OK);
	setlocale(LC_NUMERIC, "C");
	text = slurp(p);
	assert_string_equal(
	        text,
	        "t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status,margin,size_px,heading_source,hold_"
	        "score,t_detect_s\n"
	        "0.033367,1,3,10.250,20.500,0.125000,-0.500000,1.500000,ok,80.00,41.50,tag,,0.041235\n"
	        "0.033367,1,5,10.250,20.500,0.125000,-0.500000,1.500000,held,,41.50,tag,0.877,0.033367\n"
	        "0.033367,1,7,,,,,,lost,,,,,\n");
	assert_int_equal(wl_raw_read(p, keep_raw, &got, &err), WL_OK);
	assert_int_equal(got.n, 3);
	assert_true(isnan(got.rows[0].hold_score) && got.rows[0].t_detect_s == 0.041235);
	assert_int_equal(got.rows[1].status, WL_RAW_HELD);
	assert_true(got.rows[1].hold_score == 0.877 && got.rows[1].x_m == 0.125 && isnan(got.rows[1].margin));
	assert_true(got.rows[1].t_detect_s == 0.033367);
	got.rows[1] = got.rows[2];
	assert_int_equal(got.rows[0].id, 3);
	assert_int_equal(got.rows[0].status, WL_RAW_OK);
	assert_int_equal(got.rows[0].heading_source, WL_HS_TAG);
	assert_true(got.rows[0].u_px == 10.25 && got.rows[0].size_px == 41.5 && got.rows[0].x_m == 0.125);
	assert_int_equal(got.rows[0].line, 2);
	assert_int_equal(got.rows[1].status, WL_RAW_LOST);
	assert_true(isnan(got.rows[1].x_m) && isnan(got.rows[1].t_detect_s));
	free(text);
	/* abort leaves no file */
	unlink(p);
	assert_int_equal(wl_raw_open(p, &w, NULL), WL_OK);
	wl_raw_abort(w);
	assert_int_equal(access(p, F_OK), -1);
}

static void raw_error(const char *text, const char *want)
{
	raw_rows got = {0};
	wl_err err;
	wl_err_clear(&err);
	assert_int_equal(wl_raw_read_mem("r.csv", text, strlen(text), keep_raw, &got, &err), WL_EFORMAT);
	if (!strstr(err.msg, want))
		fail_msg("'%s' lacks '%s'", err.msg, want);
}

static void test_raw_errors(void **state)
{
	static const char H[] =
	        "t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status,margin,size_px,heading_source\n";
	static const char H17[] = "t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status,margin,size_px,heading_"
	                          "source,hold_score,t_detect_s\n";
	char buf[512];
	(void)state;
	/* a table of another format is named as such, with the command that writes RAW.csv */
	raw_error("t_s,frame,id,x_m,y_m,segment,status\n0,0,1,0,0,0,measured\n",
	          "r.csv:1: the header has no column 'heading_rad'");
	raw_error("t_s,frame,id,x_m,y_m,segment,status\n",
	          "is this a RAW.csv? give the table `wakeline track` writes");
	snprintf(buf, sizeof buf, "%s0,0,1,,,0,0,0,seen,,,\n", H);
	raw_error(buf, "r.csv:2: column 'status': 'seen' is not 'ok', 'held' or 'lost'");
	/* issue 17's columns: a score is a number, a detection time within a second after t_s */
	snprintf(buf, sizeof buf, "%s0,0,1,,,0,0,0,held,,,tag,high,0\n", H17);
	raw_error(buf, "r.csv:2: column 'hold_score': 'high' is not a number");
	snprintf(buf, sizeof buf, "%s0.5,0,1,,,0,0,0,ok,,,tag,,0.4\n", H17);
	raw_error(buf, "r.csv:2: column 't_detect_s': 0.400000 is not within a second after t_s");
	snprintf(buf, sizeof buf, "%s0,0,1,,,0,0,0,ok,,,sonar\n", H);
	raw_error(buf, "r.csv:2: column 'heading_source': 'sonar'");
	snprintf(buf, sizeof buf, "%s0,0,1,,,0,0,0,ok,lots,,tag\n", H);
	raw_error(buf, "r.csv:2: column 'margin': 'lots' is not a number");
	raw_error(H, "no data rows");
	raw_error("", "the file is empty");
}

/* ---- CLEAN.csv and CLEAN.json ---- */

typedef struct {
	wl_clean_row rows[8];
	int n;
} clean_rows;

static wl_status keep_clean(const wl_clean_row *r, void *ctx, wl_err *err)
{
	clean_rows *k = ctx;
	(void)err;
	if (k->n < 8)
		k->rows[k->n++] = *r;
	return WL_OK;
}

static void test_clean_round_trip(void **state)
{
	wl_clean_row rows[2] = {{0.5, 15, 4, 1.25, -0.75, 3.0, 0.2, 0.1, 0.2, 0.0, 2.9, 0, WL_ST_MEASURED,
	                         WL_CUT_NONE, 0, 0, 0},
	                        {0.6, 18, 4, 1.5, -0.5, -3.0, 0.3, NAN, NAN, NAN, NAN, -1, WL_ST_FILLED,
	                         WL_CUT_WALL, 0, 0, 0}};
	wl_clean_segment seg = {0.5, 0.5, 1};
	wl_clean_robot rb = {0};
	wl_clean_result res = {rows, 2, &rb, 1};
	wl_clean_params p = {0};
	wl_rawside cam;
	wl_clean_source src = {"r.csv", 123, "ab", 2, "cal.json", "cd", 0, &cam};
	wl_clean_sidecar sc;
	clean_rows got = {0};
	wl_err err;
	char *text, *csv = path_of("clean.csv"), *js = path_of("clean.json");
	(void)state;
	rb.id = 4;
	rb.nsegments = 1;
	rb.segments = &seg;
	rb.trim_s = 0.5;
	rb.trim_reason = "settled";
	rb.wall_s = 0.6;
	rb.end_reason = "wall";
	p.body_diameter_m = 0.1;
	p.wall_margin_m = -1;
	p.n_outline = 0;
	/* the camera watch's record: one move registered again, nothing suspect */
	wl_rawside_init(&cam);
	cam.enabled = 1;
	cam.n_moves = 1;
	cam.moves[0].t_s = 5.25;
	cam.moves[0].last_still_t_s = 4.75;
	cam.moves[0].shift_px = 3.5;
	cam.moves[0].reregistered = 1;
	cam.moves[0].markers = 7;
	cam.moves[0].rms_px = 0.25;
	cam.moves[0].turn_deg = 0.375;
	cam.moves[0].centre_shift_mm = 1.5;
	cam.threshold_px = 0.75;
	cam.min_markers = 4;
	assert_int_equal(wl_clean_write(csv, js, &p, &src, &res, &err), WL_OK);
	text = slurp(csv);
	assert_string_equal(text,
	                    "t_s,frame,id,x_m,y_m,heading_rad,speed_mps,yaw_rate_radps,vx_mps,vy_mps,segment,"
	                    "status,cut,heading_meas_rad\n"
	                    "0.500000,15,4,1.250000,-0.750000,3.000000,0.200000,0.100000,0.200000,0.000000,0,"
	                    "measured,,2.900000\n"
	                    "0.600000,18,4,1.500000,-0.500000,-3.000000,0.300000,,,,-1,filled,wall,\n");
	free(text);
	assert_int_equal(wl_clean_read(csv, keep_clean, &got, &err), WL_OK);
	assert_int_equal(got.n, 2);
	assert_int_equal(got.rows[1].id, 4);
	assert_int_equal(got.rows[1].frame, 18);
	assert_int_equal(got.rows[1].segment, -1);
	assert_int_equal(got.rows[1].status, WL_ST_FILLED);
	assert_int_equal(got.rows[1].cut, WL_CUT_WALL);
	assert_true(isnan(got.rows[1].yaw_rate_radps) && got.rows[0].heading_rad == 3.0);
	assert_true(got.rows[0].heading_meas_rad == 2.9 && isnan(got.rows[1].heading_meas_rad));
	/* the sidecar reads back */
	assert_int_equal(wl_clean_sidecar_read(js, &sc, &err), WL_OK);
	assert_string_equal(sc.input_path, "r.csv");
	assert_string_equal(sc.cal_sha256, "cd");
	assert_int_equal(sc.nrobots, 1);
	assert_int_equal(sc.robots[0].id, 4);
	assert_string_equal(sc.robots[0].trim_reason, "settled");
	assert_string_equal(sc.robots[0].end_reason, "wall");
	assert_int_equal(sc.robots[0].nsegments, 1);
	assert_int_equal(sc.robots[0].segments[0].rows, 1);
	assert_int_equal(sc.camera_known, 1);
	assert_int_equal(sc.camera.enabled, 1);
	assert_int_equal(sc.camera.n_moves, 1);
	assert_true(sc.camera.moves[0].t_s == 5.25 && sc.camera.moves[0].last_still_t_s == 4.75);
	assert_true(sc.camera.moves[0].shift_px == 3.5 && sc.camera.moves[0].reregistered == 1);
	/* what the verdict judges a re-registration by */
	assert_int_equal(sc.camera.moves[0].markers, 7);
	assert_true(sc.camera.moves[0].rms_px == 0.25 && sc.camera.moves[0].turn_deg == 0.375);
	assert_true(sc.camera.moves[0].centre_shift_mm == 1.5);
	assert_true(sc.camera.threshold_px == 0.75 && sc.camera.min_markers == 4);
	assert_true(isnan(sc.camera.suspect_from_t_s));
	/* the move's bracket (4.75, 5.25] against a run's span */
	assert_int_equal(wl_rawside_moves_in(&sc.camera, 5.0, 9.0), 1);
	assert_int_equal(wl_rawside_moves_in(&sc.camera, 0.0, 4.5), 0);
	assert_int_equal(wl_rawside_moves_in(&sc.camera, 5.5, 9.0), 0);
	wl_clean_sidecar_release(&sc);
	/* without a RAW sidecar the record is null, and reads back unknown */
	src.camera = NULL;
	assert_int_equal(wl_clean_write(csv, js, &p, &src, &res, &err), WL_OK);
	text = slurp(js);
	assert_non_null(strstr(text, "\"camera\":\tnull"));
	free(text);
	assert_int_equal(wl_clean_sidecar_read(js, &sc, &err), WL_OK);
	assert_int_equal(sc.camera_known, 0);
	wl_clean_sidecar_release(&sc);
	/* a RAW.csv given as CLEAN.csv is named */
	text = "t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status\n0,0,1,,,0,0,0,ok\n";
	assert_int_equal(wl_clean_read_mem("x.csv", text, strlen(text), keep_clean, &got, &err), WL_EFORMAT);
	assert_non_null(strstr(err.msg, "x.csv:1: the header has no column 'segment'"));
	assert_non_null(strstr(err.msg, "CLEAN.csv"));
	text = "t_s,id,x_m,y_m,segment,status,cut\n0,1,0,0,0,measured,door\n";
	assert_int_equal(wl_clean_read_mem("x.csv", text, strlen(text), keep_clean, &got, &err), WL_EFORMAT);
	assert_non_null(strstr(err.msg, "x.csv:2: column 'cut': 'door'"));
	/* a sidecar of a newer version is refused with what to do */
	text = "{\"format\": \"wakeline clean sidecar\", \"format_version\": 2, \"robots\": []}";
	assert_int_equal(wl_clean_sidecar_parse("s.json", text, strlen(text), &sc, &err), WL_EFORMAT);
	assert_non_null(
	        strstr(err.msg, "s.json: CLEAN.json format_version 2 is newer than this wakeline reads (1)"));
	assert_non_null(strstr(err.msg, "update wakeline"));
}

/* ---- SUMMARY.json ---- */

static void test_summary_round_trip(void **state)
{
	wl_summary s, back;
	wl_summary_run run;
	wl_err err;
	char *js = path_of("summary.json"), *csv = path_of("runs.csv"), *text, cell[WL_SUMMARY_CELL];
	(void)state;
	wl_summary_init(&s);
	memset(&run, 0, sizeof run);
	wl_summary_measures_init(&run.m);
	run.id = 12;
	run.segment = 1;
	run.headline = 1;
	run.trim_start_s = 2.5;
	run.commanded_period_s = NAN;
	run.m.radius_m = 0.5;
	run.m.curvature_per_m = 2.0;
	run.m.curvature_ci95_per_m[0] = 1.9;
	run.m.curvature_ci95_per_m[1] = 2.1;
	run.m.yaw_osc_freq_hz = 1.25;
	run.m.n_rows = 300;
	run.m.ar_order = 3;
	run.m.verdict = WL_VERDICT_CHECK;
	run.m.n_reasons = 2;
	snprintf(run.m.reasons[0], WL_SUMMARY_REASON_LEN, "4%% of rows rejected as outliers");
	snprintf(run.m.reasons[1], WL_SUMMARY_REASON_LEN, "arc of 20 deg");
	run.m.budget[WL_BM_CURVATURE].total_se = 0.05;
	run.m.budget[WL_BM_CURVATURE].se[WL_BS_FIT] = 0.03;
	run.m.budget[WL_BM_CURVATURE].se[WL_BS_PLANE_HEIGHT] = 0.04;
	s.input = strdup("clean.csv");
	s.runs = &run;
	s.nruns = 1;
	setlocale(LC_NUMERIC, "de_DE.UTF-8");
	assert_int_equal(wl_summary_write(js, csv, &s, &err), WL_OK);
	setlocale(LC_NUMERIC, "C");
	s.runs = NULL;
	s.nruns = 0;
	wl_summary_release(&s);
	/* the CSV: one interval as _lo/_hi, booleans as words, unknown cells empty */
	text = slurp(csv);
	assert_non_null(strstr(text, "id,segment,headline,verdict,verdict_reasons,radius_m,radius_ci95_m_lo,"
	                             "radius_ci95_m_hi,curvature_per_m,curvature_ci95_per_m_lo,"
	                             "curvature_ci95_per_m_hi,straight,"));
	/* the reasons joined with "; " (contracts.md) */
	assert_non_null(strstr(text,
	                       "\n12,1,true,check,4% of rows rejected as outliers; arc of 20 deg,0.5,,,2,1.9,"
	                       "2.1,false,"));
	assert_null(strstr(text, "ci95_low"));
	free(text);
	text = slurp(js);
	assert_non_null(strstr(text, "\"curvature_ci95_per_m\":\t[1.9, 2.1]"));
	assert_non_null(strstr(
	        text, "\"verdict_reasons\":\t[\"4% of rows rejected as outliers\", \"arc of 20 deg\"]"));
	/* the budget: the sources that enter, with their shares (0.03² + 0.04² = 0.05²) */
	assert_non_null(strstr(text, "\"source\":\t\"plane_height\""));
	assert_non_null(strstr(text, "\"share\":\t0.64"));
	assert_null(strstr(text, "period_ratio")); /* no commanded period given */
	free(text);
	assert_int_equal(wl_summary_read(js, &back, &err), WL_OK);
	assert_string_equal(back.input, "clean.csv");
	assert_int_equal(back.nruns, 1);
	assert_int_equal(back.runs[0].id, 12);
	assert_int_equal(back.runs[0].headline, 1);
	assert_true(back.runs[0].m.curvature_ci95_per_m[1] == 2.1);
	assert_true(isnan(back.runs[0].m.arc_deg));
	assert_int_equal(back.runs[0].m.n_rows, 300);
	assert_string_equal(wl_summary_cell(&back.runs[0], WL_SUMCOL_YAW_PERIOD, cell, sizeof cell), "0.8");
	assert_int_equal(back.runs[0].nextra, 0);
	assert_int_equal(back.runs[0].m.verdict, WL_VERDICT_CHECK);
	assert_int_equal(back.runs[0].m.n_reasons, 2);
	assert_string_equal(back.runs[0].m.reasons[1], "arc of 20 deg");
	assert_true(back.runs[0].m.budget[WL_BM_CURVATURE].se[WL_BS_PLANE_HEIGHT] == 0.04);
	assert_true(isnan(back.runs[0].m.budget[WL_BM_CURVATURE].se[WL_BS_CALIBRATION]));
	assert_true(isnan(back.runs[0].m.budget[WL_BM_SPEED].total_se));
	wl_summary_release(&back);
}

static void summary_error(const char *text, const char *want)
{
	wl_summary s;
	wl_err err;
	wl_err_clear(&err);
	assert_int_not_equal(wl_summary_parse("s.json", text, strlen(text), &s, &err), WL_OK);
	wl_summary_release(&s);
	if (!strstr(err.msg, want))
		fail_msg("'%s' lacks '%s'", err.msg, want);
}

static void test_summary_checks(void **state)
{
	wl_summary s;
	wl_err err;
	const char *text =
	        "{\"format\": \"wakeline summary\", \"format_version\": 1, \"runs\": [{\"id\": 1, "
	        "\"segment\": 0, \"verdict\": \"ok\", \"band_m\": [0.1, null], \"budget\": {\"x\": 1}}]}";
	(void)state;
	summary_error("{\"format\": \"wakeline summary\", \"format_version\": 2, \"runs\": []}",
	              "s.json: SUMMARY.json format_version 2 is newer than this wakeline reads (1): update "
	              "wakeline");
	summary_error("{\"format\": \"wakeline-calibration\", \"runs\": []}",
	              "not a SUMMARY.json (key 'format' is 'wakeline-calibration'");
	summary_error("{\"runs\": []}", "key 'format' is missing");
	summary_error("{\"format\": \"wakeline summary\", \"runs\": [{\"id\": 1, \"segment\": 0, "
	              "\"straight\": 1}]}",
	              "runs[0]: key 'straight' must be true or false");
	summary_error("{\"format\": \"wakeline summary\", \"runs\": [{\"segment\": 0}]}",
	              "runs[0] has no 'id'");
	summary_error("{\"format\": \"wakeline summary\", \"runs\": [{\"id\": 1, \"segment\": 0, "
	              "\"verdict\": \"fine\"}]}",
	              "runs[0]: key 'verdict' must be \"ok\", \"check\" or \"reject\"");
	/* keys this version does not know are kept as text, intervals as _lo/_hi; a
	 * budget's unknown measures are passed over */
	assert_int_equal(wl_summary_parse("s.json", text, strlen(text), &s, &err), WL_OK);
	assert_int_equal(s.runs[0].m.verdict, WL_VERDICT_OK);
	assert_int_equal(s.runs[0].nextra, 2);
	assert_string_equal(s.runs[0].extra[0].key, "band_m_lo");
	assert_string_equal(s.runs[0].extra[1].value, "");
	wl_summary_release(&s);
}

/* ---- CAL.json's shared parts ---- */

static void cal_outline(const char *text, wl_status want, int n, const char *msg)
{
	wl_cal_doc d;
	wl_cal_outline o;
	wl_err err;
	wl_status st;
	wl_err_clear(&err);
	st = wl_cal_doc_parse("c.json", text, strlen(text), &d, &err);
	if (!st)
		st = wl_cal_get_outline(&d, &o, &err);
	wl_cal_doc_release(&d);
	assert_int_equal(st, want);
	if (!st)
		assert_int_equal(o.n, n);
	else if (!strstr(err.msg, msg))
		fail_msg("'%s' lacks '%s'", err.msg, msg);
}

static void test_cal_shared(void **state)
{
	(void)state;
	/* one rule for every reader: present, empty for none, else 3 to 64 pairs */
	cal_outline("{\"format\": \"wakeline-calibration\", \"format_version\": 1, \"tank_outline_m\": "
	            "[[0, 0], [1, 0], [1, 1]]}",
	            WL_OK, 3, NULL);
	cal_outline("{\"format\": \"wakeline-calibration\", \"tank_outline_m\": []}", WL_OK, 0, NULL);
	cal_outline("{\"format\": \"wakeline-calibration\", \"tank_outline_m\": [[0, 0], [1, 0]]}",
	            WL_EFORMAT, 0, "c.json: key 'tank_outline_m' must be an array of 3 to 64");
	cal_outline(
	        "{\"format\": \"wakeline-calibration\", \"tank_outline_m\": [[0, 0], [1, 0], [1, \"a\"]]}",
	        WL_EFORMAT, 0, "item 2 is not an [x, y] pair");
	cal_outline("{\"format\": \"wakeline-calibration\"}", WL_EFORMAT, 0,
	            "key 'tank_outline_m' is missing");
	cal_outline("{\"tank_outline_m\": []}", WL_EFORMAT, 0, "not a CAL.json (key 'format' is missing)");
	cal_outline("{\"format\": \"wakeline-calibration\", \"format_version\": 7, \"tank_outline_m\": []}",
	            WL_EFORMAT, 0, "newer than this wakeline reads");
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_raw_round_trip),   cmocka_unit_test(test_raw_errors),
	        cmocka_unit_test(test_clean_round_trip), cmocka_unit_test(test_summary_round_trip),
	        cmocka_unit_test(test_summary_checks),   cmocka_unit_test(test_cal_shared),
	};
	return cmocka_run_group_tests(tests, setup, teardown);
}
