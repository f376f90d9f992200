/*
 * test_pose_packet.c: unit tests of the live pose packet
 * (src/formats/pose_packet.c): JSON round trips with '.' decimals under a
 * decimal-comma locale, the binary layout byte by byte against the table in
 * docs/live.md and IEEE 754 bit patterns, refusals of foreign packets, and
 * LCM through the coder lcm-gen made and an in-process LCM bus (when the
 * build has LCM).  The e2e test 1000-live-udp decodes the binary layout
 * independently, with Python's struct.
 */
#define _POSIX_C_SOURCE 200809L
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

#include "formats/pose_packet.h"

#ifdef WL_HAVE_LCM
#include <lcm/lcm.h>
#endif

/* cmocka 1.1's assert_float_equal compares in single precision: this
 * compares doubles and prints them in full. */
#define assert_near(a, b, tol) near_((double)(a), (double)(b), (double)(tol), #a, __LINE__)
static void near_(double a, double b, double tol, const char *what, int line)
{
	if (!(fabs(a - b) <= tol))
		fail_msg("line %d: %s = %.17g, expected %.17g within %g", line, what, a, b, tol);
}

static uint64_t rng_state;
static double urand(void)
{
	rng_state = rng_state * 6364136223846793005ULL + 1442695040888963407ULL;
	return ((rng_state >> 11) + 0.5) / 9007199254740992.0;
}

static wl_pose random_pose(void)
{
	wl_pose p;
	memset(&p, 0, sizeof p);
	p.session = (uint32_t)(urand() * 4294967295.0);
	p.seq = (uint64_t)(urand() * 1e12);
	p.frame = (int64_t)(urand() * 1e9);
	p.id = (int32_t)(urand() * 600) - 100;
	p.status = (wl_pose_status)(int)(urand() * 3);
	p.t_s = urand() * 1e5;
	p.arrival_unix_s = 1.7e9 + urand() * 1e8;
	p.x_m = (urand() - 0.3) * 5;
	p.y_m = (urand() - 0.3) * 5;
	p.heading_rad = (urand() - 0.5) * 6.28;
	p.vx_mps = (urand() - 0.5) * 2;
	p.vy_mps = urand() < 0.1 ? NAN : (urand() - 0.5) * 2;
	p.yaw_rate_radps = (urand() - 0.5) * 10;
	p.latency_ms = urand() * 50;
	return p;
}

static void near_or_nan(double a, double b, double tol)
{
	if (isnan(b)) {
		assert_true(isnan(a));
		return;
	}
	assert_near(a, b, tol);
}

/* ---------------------------------------------------------------- JSON */

static void test_json_round_trip(void **state)
{
	(void)state;
	rng_state = 1;
	for (int k = 0; k < 500; k++) {
		wl_pose p = random_pose(), q;
		char buf[WL_POSE_JSON_MAX];
		size_t n = wl_pose_json_encode(&p, buf, sizeof buf);
		wl_err e;
		assert_true(n > 0 && n < sizeof buf && strlen(buf) == n);
		assert_int_equal(wl_pose_json_decode(buf, n, &q, &e), WL_OK);
		assert_int_equal(q.session, p.session);
		assert_int_equal(q.seq, p.seq);
		assert_int_equal(q.frame, p.frame);
		assert_int_equal(q.id, p.id);
		assert_int_equal(q.status, p.status);
		/* written with 6 decimals (3 for the latency) */
		near_or_nan(q.t_s, p.t_s, 5.1e-7);
		near_or_nan(q.arrival_unix_s, p.arrival_unix_s, 5.1e-7);
		near_or_nan(q.x_m, p.x_m, 5.1e-7);
		near_or_nan(q.y_m, p.y_m, 5.1e-7);
		near_or_nan(q.heading_rad, p.heading_rad, 5.1e-7);
		near_or_nan(q.vx_mps, p.vx_mps, 5.1e-7);
		near_or_nan(q.vy_mps, p.vy_mps, 5.1e-7);
		near_or_nan(q.yaw_rate_radps, p.yaw_rate_radps, 5.1e-7);
		near_or_nan(q.latency_ms, p.latency_ms, 5.1e-4);
	}
}

/* The exact text of one packet: key order, null for NaN, the speed. */
static void test_json_text(void **state)
{
	wl_pose p;
	char buf[WL_POSE_JSON_MAX];
	(void)state;
	memset(&p, 0, sizeof p);
	p.session = 4000000000u;
	p.seq = 12;
	p.frame = 6;
	p.id = 3;
	p.status = WL_POSE_LOST;
	p.t_s = 0.2;
	p.arrival_unix_s = 1700000000.25;
	p.x_m = p.y_m = p.heading_rad = NAN;
	p.vx_mps = 0.3;
	p.vy_mps = -0.4;
	p.yaw_rate_radps = NAN;
	p.latency_ms = 1.5;
	assert_true(wl_pose_json_encode(&p, buf, sizeof buf) > 0);
	assert_string_equal(buf,
	                    "{\"type\":\"wakeline.pose\",\"version\":1,\"session\":4000000000,\"seq\":12,"
	                    "\"frame\":6,\"id\":3,\"status\":\"lost\",\"t_s\":0.200000,"
	                    "\"arrival_unix_s\":1700000000.250000,\"x_m\":null,\"y_m\":null,"
	                    "\"heading_rad\":null,\"vx_mps\":0.300000,\"vy_mps\":-0.400000,"
	                    "\"speed_mps\":0.500000,\"yaw_rate_radps\":null,\"latency_ms\":1.500}");
	/* too small a buffer: nothing, not a cut packet */
	assert_int_equal(wl_pose_json_encode(&p, buf, 100), 0);
}

/* Numbers keep '.' decimals under a decimal-comma locale (PITFALLS.md,
 * "Locale"). */
static void test_json_locale(void **state)
{
	wl_pose p;
	char buf[WL_POSE_JSON_MAX];
	(void)state;
	if (!setlocale(LC_ALL, "de_DE.UTF-8")) {
		skip(); /* scripts/setup generates it */
		return;
	}
	rng_state = 5;
	p = random_pose();
	p.x_m = 1.5;
	assert_true(wl_pose_json_encode(&p, buf, sizeof buf) > 0);
	setlocale(LC_ALL, "C");
	assert_non_null(strstr(buf, "\"x_m\":1.500000,"));
	for (const char *c = buf; *c; c++)
		if (*c == ',')
			assert_true(c[1] == '"'); /* every comma separates keys */
}

static void test_json_refusals(void **state)
{
	static const char *const bad[] = {
	        "[1,2]",
	        "{\"type\":\"other\",\"version\":1}",
	        "{\"type\":\"wakeline.pose\",\"version\":2,\"session\":1,\"seq\":1,\"frame\":1,\"id\":1}",
	        "{\"type\":\"wakeline.pose\",\"version\":1,\"session\":1,\"seq\":1,\"frame\":1,\"id\":1,"
	        "\"status\":\"fine\"}",
	        "{\"type\":\"wakeline.pose\",\"version\":1,\"session\":1,\"seq\":1.5,\"frame\":1,\"id\":1}",
	        "{\"type\":\"wakeline.pose\",\"version\":1,\"session\":1,\"seq\":1,\"frame\":1,\"id\":1,"
	        "\"status\":\"ok\",\"t_s\":\"0\"}",
	        "{\"type\":",
	};
	const char *what[] = {
	        "not a JSON object", "not a wakeline pose", "version 2", "status", "'seq'", "'t_s'",
	        "not a JSON object"};
	(void)state;
	for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
		wl_pose p;
		wl_err e;
		wl_err_clear(&e);
		assert_int_equal(wl_pose_json_decode(bad[i], strlen(bad[i]), &p, &e), WL_EFORMAT);
		assert_non_null(strstr(e.msg, what[i]));
	}
}

/* -------------------------------------------------------------- binary */

/* The layout of docs/live.md, byte by byte.  Float bit patterns are IEEE
 * 754 (binary32 1.5 = 0x3fc00000, -0.25 = 0xbe800000, binary64 2.0 =
 * 0x4000000000000000, 1e9 = 0x41cdcd6500000000; common practice). */
static void test_binary_layout(void **state)
{
	wl_pose p, q;
	uint8_t b[WL_POSE_BIN_SIZE + 8];
	wl_err e;
	static const uint8_t want[WL_POSE_BIN_SIZE] = {
	        'W',  'L',  'P',  'S',  1,    0,    72,   0,    /* magic, version 1, size 72 */
	        0x04, 0x03, 0x02, 0x01, 0x0d, 0x0c, 0x0b, 0x0a, /* session, seq (low 32 bits) */
	        0x39, 0x30, 0x00, 0x00, 0xfe, 0xff, 0xff, 0xff, /* frame 12345, id -2 */
	        0,    0,    0,    0,    0,    0,    0,    0x40, /* t_s 2.0 */
	        0,    0,    0,    0,    0x65, 0xcd, 0xcd, 0x41, /* arrival 1e9 */
	        0,    0,    0xc0, 0x3f, 0,    0,    0x80, 0xbe, /* x 1.5, y -0.25 */
	        0,    0,    0xc0, 0x7f, 0,    0,    0,    0,    /* heading NaN, vx 0 */
	        0,    0,    0x80, 0x3f, 0,    0,    0,    0x40, /* vy 1, yaw rate 2 */
	        0,    0,    0x40, 0x40, 2,    0,    0,    0,    /* latency 3 ms, status held, zero */
	};
	(void)state;
	memset(&p, 0, sizeof p);
	p.session = 0x01020304;
	p.seq = 0x1230a0b0c0dULL; /* only the low 32 bits travel */
	p.frame = 12345;
	p.id = -2;
	p.status = WL_POSE_HELD;
	p.t_s = 2.0;
	p.arrival_unix_s = 1e9;
	p.x_m = 1.5;
	p.y_m = -0.25;
	p.heading_rad = NAN;
	p.vx_mps = 0;
	p.vy_mps = 1;
	p.yaw_rate_radps = 2;
	p.latency_ms = 3;
	assert_int_equal(wl_pose_bin_encode(&p, b, sizeof b), WL_POSE_BIN_SIZE);
	assert_memory_equal(b, want, WL_POSE_BIN_SIZE);
	assert_int_equal(wl_pose_bin_encode(&p, b, WL_POSE_BIN_SIZE - 1), 0);
	assert_int_equal(wl_pose_bin_decode(want, sizeof want, &q, &e), WL_OK);
	assert_int_equal(q.seq, 0x0a0b0c0d);
	assert_int_equal(q.id, -2);
	assert_int_equal(q.status, WL_POSE_HELD);
	assert_true(isnan(q.heading_rad));
	assert_near(q.y_m, -0.25, 0);
	assert_near(q.arrival_unix_s, 1e9, 0);
	/* a longer packet of the same version (fields appended later) reads */
	memcpy(b, want, sizeof want);
	memset(b + sizeof want, 0xee, 8);
	b[6] = 80;
	assert_int_equal(wl_pose_bin_decode(b, 80, &q, &e), WL_OK);
	assert_near(q.x_m, 1.5, 0);
}

static void test_binary_refusals(void **state)
{
	uint8_t b[WL_POSE_BIN_SIZE];
	wl_pose p;
	wl_err e;
	(void)state;
	memset(&p, 0, sizeof p);
	wl_pose_bin_encode(&p, b, sizeof b);
	b[0] = 'X';
	assert_int_equal(wl_pose_bin_decode(b, sizeof b, &p, &e), WL_EFORMAT);
	assert_non_null(strstr(e.msg, "magic"));
	b[0] = 'W';
	b[4] = 2;
	assert_int_equal(wl_pose_bin_decode(b, sizeof b, &p, &e), WL_EFORMAT);
	assert_non_null(strstr(e.msg, "version 2"));
	b[4] = 1;
	assert_int_equal(wl_pose_bin_decode(b, sizeof b - 1, &p, &e), WL_EFORMAT);
	assert_non_null(strstr(e.msg, "size"));
	b[6] = 60;
	assert_int_equal(wl_pose_bin_decode(b, sizeof b, &p, &e), WL_EFORMAT);
	b[6] = 72;
	b[68] = 3;
	assert_int_equal(wl_pose_bin_decode(b, sizeof b, &p, &e), WL_EFORMAT);
	assert_non_null(strstr(e.msg, "status"));
	assert_int_equal(wl_pose_bin_decode(b, 3, &p, &e), WL_EFORMAT);
}

/* ----------------------------------------------------------------- LCM */

#ifdef WL_HAVE_LCM
typedef struct {
	int n;
	wl_pose got;
	wl_status st;
} lcm_sink;

static void on_lcm(const lcm_recv_buf_t *rbuf, const char *channel, void *user)
{
	lcm_sink *s = user;
	(void)channel;
	s->st = wl_pose_lcm_decode(rbuf->data, rbuf->data_size, &s->got, NULL);
	s->n++;
}
#endif

/* Round trip through lcm-gen's coder, and one message through an
 * in-process LCM bus (provider memq://) on a channel. */
static void test_lcm(void **state)
{
	(void)state;
#ifdef WL_HAVE_LCM
	uint8_t buf[WL_POSE_LCM_MAX];
	wl_pose p, q;
	size_t n;
	lcm_t *lcm;
	lcm_sink sink = {0, {0}, WL_EFORMAT};
	assert_true(wl_pose_lcm_available());
	rng_state = 9;
	p = random_pose();
	n = wl_pose_lcm_encode(&p, buf, sizeof buf);
	assert_true(n > 8);
	assert_int_equal(wl_pose_lcm_decode(buf, n, &q, NULL), WL_OK);
	assert_int_equal(q.seq, p.seq);
	assert_near(q.x_m, p.x_m, 0);
	assert_near(q.latency_ms, p.latency_ms, 1e-4); /* a float field */
	buf[0] ^= 0xff;                                /* the type's fingerprint */
	assert_int_equal(wl_pose_lcm_decode(buf, n, &q, NULL), WL_EFORMAT);
	lcm = lcm_create("memq://");
	assert_non_null(lcm);
	lcm_subscribe(lcm, "WAKELINE_POSE", on_lcm, &sink);
	n = wl_pose_lcm_encode(&p, buf, sizeof buf);
	assert_int_equal(lcm_publish(lcm, "WAKELINE_POSE", buf, (unsigned)n), 0);
	assert_int_equal(lcm_handle_timeout(lcm, 1000), 1);
	assert_int_equal(sink.n, 1);
	assert_int_equal(sink.st, WL_OK);
	assert_int_equal(sink.got.id, p.id);
	lcm_destroy(lcm);
#else
	wl_pose p;
	assert_false(wl_pose_lcm_available());
	assert_int_equal(wl_pose_lcm_decode((const uint8_t *)"x", 1, &p, NULL), WL_EINVAL);
	skip(); /* this build has no LCM */
#endif
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_json_round_trip),
	        cmocka_unit_test(test_json_text),
	        cmocka_unit_test(test_json_locale),
	        cmocka_unit_test(test_json_refusals),
	        cmocka_unit_test(test_binary_layout),
	        cmocka_unit_test(test_binary_refusals),
	        cmocka_unit_test(test_lcm),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
