/*
 * test_live.c: unit tests of the live module (src/live/): the causal filter
 * against statsmodels' Kalman filter and scipy's Riccati solver (Debian's
 * python3-statsmodels and python3-scipy, through tests/live/ref_kf.py) and
 * against the offline smoother's forward pass; its gate and restarts; the
 * latency histogram against exact order statistics; the UDP publisher's
 * URLs and a datagram through loopback.
 */
#define _POSIX_C_SOURCE 200809L
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <arpa/inet.h>
#include <math.h>
#include <netinet/in.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <sys/time.h>
#include <unistd.h>

#include "live/live.h"

#define IX(i, j) ((i)*3 + (j))

/* cmocka 1.1's assert_float_equal compares in single precision: this
 * compares doubles and prints them in full. */
#define assert_near(a, b, tol) near_((double)(a), (double)(b), (double)(tol), #a, __LINE__)
static void near_(double a, double b, double tol, const char *what, int line)
{
	if (!(fabs(a - b) <= tol))
		fail_msg("line %d: %s = %.17g, expected %.17g within %g", line, what, a, b, tol);
}

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
	return sqrt(-2 * log(urand())) * cos(2 * 3.14159265358979323846 * urand());
}

/* Output of /usr/bin/python3 tests/live/ref_kf.py ARGS (caller frees). */
static char *ref_kf(const char *args)
{
	char cmd[2048], *out = NULL;
	size_t len = 0, cap = 0;
	FILE *p;
	int c;
	snprintf(cmd, sizeof cmd, "/usr/bin/python3 %s/tests/live/ref_kf.py %s", WL_SOURCE_DIR, args);
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

static wl_live_filter_cfg cfg_nogate(double sigma, double q)
{
	wl_live_filter_cfg c;
	wl_live_filter_cfg_init(&c);
	c.sigma_pos_m = sigma;
	c.q_pos = q;
	c.gate_prob = 0;
	c.max_gap_s = 1e9;
	return c;
}

/* ------------------------------------------------------------- filter */

/* The steady state of the filter on an evenly sampled constant-velocity
 * track equals the solution of the discrete algebraic Riccati equation
 * (scipy.linalg.solve_discrete_are), and the gains follow from it; on a
 * noise-free track the velocity converges to the true one (the constant-
 * velocity model is unbiased for it). */
static void test_filter_steady_state_dare(void **state)
{
	static const double cases[][3] = {
	        {1.0 / 30, 0.01, 4e-6}, {1.0 / 60, 1.0, 1e-6}, {1.0 / 240, 0.001, 1e-4}};
	(void)state;
	for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
		double dt = cases[k][0], q = cases[k][1], r = cases[k][2], ref[5], vx = 0.25, vy = -0.1;
		wl_live_filter_cfg c = cfg_nogate(sqrt(r), q);
		wl_live_filter f;
		wl_live_state s;
		char args[256], *out, *p;
		snprintf(args, sizeof args, "steady %.17g %.17g %.17g", dt, q, r);
		out = ref_kf(args);
		assert_non_null(out);
		p = out;
		for (int i = 0; i < 5; i++)
			ref[i] = strtod(p, &p);
		free(out);
		wl_live_filter_init(&f);
		for (int i = 0; i < 3000; i++)
			wl_live_filter_step(&f, &c, i * dt, 0.3 + vx * i * dt, 0.7 + vy * i * dt, NAN, &s);
		/* the prior covariance of the last step */
		assert_near(f.x.Pp[IX(0, 0)] / ref[0], 1.0, 1e-6);
		assert_near(f.x.Pp[IX(0, 1)] / ref[1], 1.0, 1e-6);
		assert_near(f.x.Pp[IX(1, 1)] / ref[2], 1.0, 1e-6);
		assert_near(f.x.Pp[IX(0, 0)] / (f.x.Pp[IX(0, 0)] + r) / ref[3], 1.0, 1e-6);
		assert_near(f.x.Pp[IX(1, 0)] / (f.x.Pp[IX(0, 0)] + r) / ref[4], 1.0, 1e-6);
		assert_near(s.vx_mps, vx, 1e-9);
		assert_near(s.vy_mps, vy, 1e-9);
		assert_true(s.accepted);
	}
}

/* Step by step against statsmodels' Kalman filter (forward pass only) on a
 * noisy track with uneven times and missing samples: the same model, the
 * same prior (the first measurement with the smoother's prior variances). */
static void test_filter_statsmodels(void **state)
{
	const int n = 200;
	const double q = 0.02, sig = 0.002;
	double t[200], z[200];
	wl_live_filter_cfg c = cfg_nogate(sig, q);
	wl_live_filter f;
	wl_live_state s;
	char path[] = "/tmp/wl-test-live-XXXXXX", args[256], *out, *p;
	FILE *fp;
	int fd;
	(void)state;
	rng_state = 7;
	for (int i = 0; i < n; i++) {
		t[i] = i ? t[i - 1] + (0.8 + 0.4 * urand()) / 30 : 0;
		z[i] = (i % 17 == 5 || i % 29 == 3) ? NAN
		                                    : 0.5 + 0.2 * t[i] + 0.05 * sin(2 * t[i]) + sig * nrand();
	}
	fd = mkstemp(path);
	assert_true(fd >= 0);
	fp = fdopen(fd, "w");
	fprintf(fp, "%.17g %.17g 1 1\n", q, sig * sig);
	for (int i = 0; i < n; i++)
		fprintf(fp, "%.17g %.17g\n", t[i], z[i]);
	fclose(fp);
	snprintf(args, sizeof args, "filter %s", path);
	out = ref_kf(args);
	unlink(path);
	assert_non_null(out);
	p = out;
	wl_live_filter_init(&f);
	for (int i = 0; i < n; i++) {
		double rp = strtod(p, &p), rv = strtod(p, &p);
		/* x carries the data, y a constant (it must not disturb x) */
		wl_live_filter_step(&f, &c, t[i], z[i], 1.0, NAN, &s);
		assert_near(f.x.xs[0], rp, 1e-9);
		assert_near(f.x.xs[1], rv, 1e-7);
	}
	free(out);
}

/* The offline smoother's last sample is its filtered state (the backward
 * pass changes nothing there): the live filter after n samples equals
 * wl_kin_smooth over the same n samples, for every n. */
static void test_filter_is_smoother_forward_pass(void **state)
{
	double t[60], z[60], zh[60], yaw_sum = 0;
	wl_kin_step st[60];
	wl_live_filter_cfg c;
	wl_live_filter f;
	wl_live_state s;
	wl_kin_cfg kp = {2, 0.05, 1e-6, 0, {1.0, 1.0, 10.0}};
	wl_kin_cfg kh = {
	        2, 2.0, 0.02 * 0.02, 1, {3.14159265358979323846 * 3.14159265358979323846, 100.0, 1e4}};
	(void)state;
	wl_live_filter_cfg_init(&c);
	c.sigma_pos_m = 1e-3;
	c.q_pos = 0.05;
	c.sigma_heading_rad = 0.02;
	c.q_heading = 2.0;
	c.gate_prob = 0;
	rng_state = 3;
	wl_live_filter_init(&f);
	for (int i = 0; i < 60; i++) {
		t[i] = i / 25.0;
		z[i] = 0.1 * t[i] + 1e-3 * nrand();
		/* a heading through +-pi: the angular axis unwraps */
		zh[i] = remainder(3.0 + 0.8 * t[i] + 0.02 * nrand(), 2 * 3.14159265358979323846);
		wl_live_filter_step(&f, &c, t[i], z[i], 0.0, zh[i], &s);
		assert_true(wl_kin_smooth(&kp, (size_t)i + 1, t, z, st, NULL));
		assert_near(f.x.xs[0], st[i].xs[0], 1e-12);
		assert_near(f.x.xs[1], st[i].xs[1], 1e-9);
		assert_true(wl_kin_smooth(&kh, (size_t)i + 1, t, zh, st, NULL));
		assert_near(f.h.xs[0], st[i].xs[0], 1e-12);
		assert_near(f.h.xs[1], st[i].xs[1], 1e-9);
		if (i > 0)
			assert_near(s.yaw_rate_radps, st[i].xs[1], 1e-9);
		if (i >= 30)
			yaw_sum += s.yaw_rate_radps;
	}
	/* the yaw rate is that of the unwrapped heading, 0.8 rad/s, also
	 * across the wrap at t = 0.18 s: the mean of the last 30 */
	assert_near(yaw_sum / 30, 0.8, 0.05);
}

/* A far detection is left out (the velocity does not jump); three in a
 * row restart the filter there; a gap longer than max_gap_s restarts it
 * with the velocity unknown until a second position. */
static void test_filter_gate_and_restart(void **state)
{
	wl_live_filter_cfg c;
	wl_live_filter f;
	wl_live_state s;
	double dt = 1.0 / 30, v;
	int i;
	(void)state;
	wl_live_filter_cfg_init(&c);
	wl_live_filter_init(&f);
	wl_live_filter_step(&f, &c, 0, NAN, NAN, NAN, &s);
	assert_false(f.started);
	assert_true(isnan(s.x_m) && isnan(s.vx_mps));
	for (i = 0; i < 60; i++)
		wl_live_filter_step(&f, &c, i * dt, 0.2 * i * dt, 0.5, 0.1, &s);
	assert_true(isnan(s.yaw_rate_radps) == 0);
	v = s.vx_mps;
	assert_near(v, 0.2, 0.01);
	/* 10 cm off: far outside the gate (sigma 2 mm) */
	wl_live_filter_step(&f, &c, i * dt, 0.2 * i * dt + 0.1, 0.5, 0.1, &s);
	assert_false(s.accepted);
	assert_near(s.vx_mps, v, 1e-3);
	i++;
	wl_live_filter_step(&f, &c, i * dt, 0.2 * i * dt + 0.1, 0.5, 0.1, &s);
	assert_false(s.accepted);
	i++;
	wl_live_filter_step(&f, &c, i * dt, 0.2 * i * dt + 0.1, 0.5, 0.1, &s);
	assert_true(s.accepted); /* the third: restarted there */
	assert_near(s.x_m, 0.2 * i * dt + 0.1, 1e-9);
	assert_true(isnan(s.vx_mps));
	/* a gap of 1 s (> 0.5 s): restart, velocity unknown, then known */
	wl_live_filter_step(&f, &c, i * dt + 1.0, 1.0, 0.5, 0.1, &s);
	assert_true(s.accepted);
	assert_true(isnan(s.vx_mps));
	assert_near(s.x_m, 1.0, 1e-9);
	wl_live_filter_step(&f, &c, i * dt + 1.0 + dt, 1.0 + 0.2 * dt, 0.5, 0.1, &s);
	assert_false(isnan(s.vx_mps));
}

static void test_filter_cfg_check(void **state)
{
	wl_live_filter_cfg c;
	wl_err e;
	(void)state;
	wl_live_filter_cfg_init(&c);
	assert_int_equal(wl_live_filter_cfg_check(&c, &e), WL_OK);
	c.q_pos = 0;
	assert_int_equal(wl_live_filter_cfg_check(&c, &e), WL_EINVAL);
	assert_non_null(strstr(e.msg, "--q-pos"));
	wl_live_filter_cfg_init(&c);
	c.gate_prob = 1;
	assert_int_equal(wl_live_filter_cfg_check(&c, &e), WL_EINVAL);
	assert_non_null(strstr(e.msg, "--gate"));
}

/* ---------------------------------------------------------- latencies */

static int cmp_double(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return (x > y) - (x < y);
}

/* Nearest-rank quantiles of log-normal samples against the sorted samples
 * (the definition): within the bins' 1 %. */
static void test_latency_quantiles(void **state)
{
	static wl_latency h;
	static double v[5001];
	const double qs[] = {0.01, 0.5, 0.9, 0.99, 1.0};
	(void)state;
	rng_state = 99;
	wl_latency_reset(&h);
	assert_true(isnan(wl_latency_quantile(&h, 0.5)));
	for (int i = 0; i < 5001; i++) {
		v[i] = 0.002 * exp(0.7 * nrand());
		wl_latency_add(&h, v[i]);
	}
	wl_latency_add(&h, NAN); /* ignored */
	assert_int_equal(h.n, 5001);
	qsort(v, 5001, sizeof v[0], cmp_double);
	for (size_t k = 0; k < sizeof qs / sizeof qs[0]; k++) {
		double exact = v[(int)ceil(qs[k] * 5001) - 1];
		assert_near(wl_latency_quantile(&h, qs[k]) / exact, 1.0, 0.0101);
	}
	assert_near(h.max_s, v[5000], 0);
}

/* ---------------------------------------------------------- publisher */

static void test_publisher_urls(void **state)
{
	static const char *const bad[] = {"tcp://127.0.0.1:9000",
	                                  "udp://127.0.0.1",
	                                  "udp://:9000",
	                                  "udp://127.0.0.1:0",
	                                  "udp://127.0.0.1:99999",
	                                  "udp://127.0.0.1:9000?format=xml",
	                                  "udp://127.0.0.1:9000?ttl=300",
	                                  "udp://127.0.0.1:9000?colour=red",
	                                  "udp://[::1:9000",
	                                  "udp://127.0.0.1:9000?ttl"};
	wl_publisher *p;
	wl_err e;
	(void)state;
	assert_int_equal(wl_publisher_create(&p, &e), WL_OK);
	for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
		wl_err_clear(&e);
		assert_int_equal(wl_publisher_add_udp(p, bad[i], WL_PUB_JSON, &e), WL_EINVAL);
		assert_non_null(strstr(e.msg, bad[i])); /* the message names the URL */
	}
	assert_int_equal(wl_publisher_add_udp(p, "udp://127.0.0.1:9?format=binary", WL_PUB_JSON, &e), WL_OK);
	assert_int_equal(wl_publisher_add_udp(p, "udp://[::1]:9", WL_PUB_JSON, &e), WL_OK);
	assert_int_equal(wl_publisher_add_udp(p, "udp://239.255.0.9:9?ttl=0", WL_PUB_JSON, &e), WL_OK);
	assert_int_equal(wl_publisher_add_udp(p, "udp://localhost:9", WL_PUB_BINARY, &e), WL_OK);
	assert_int_equal(wl_publisher_targets(p), 4);
	wl_publisher_destroy(p);
	wl_publisher_destroy(NULL);
}

/* A pose sent to a socket of ours on loopback arrives as one datagram of
 * each format, in the order sent. */
static void test_publisher_loopback(void **state)
{
	struct sockaddr_in a;
	socklen_t al = sizeof a;
	char url[2][96], buf[1024];
	int fd = socket(AF_INET, SOCK_DGRAM, 0);
	wl_publisher *p;
	wl_pose pose, back;
	wl_err e;
	int64_t sent, failed;
	ssize_t n;
	struct timeval tv = {2, 0};
	(void)state;
	assert_true(fd >= 0);
	memset(&a, 0, sizeof a);
	a.sin_family = AF_INET;
	a.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
	assert_int_equal(bind(fd, (struct sockaddr *)&a, sizeof a), 0);
	assert_int_equal(getsockname(fd, (struct sockaddr *)&a, &al), 0);
	setsockopt(fd, SOL_SOCKET, SO_RCVTIMEO, &tv, sizeof tv);
	snprintf(url[0], sizeof url[0], "udp://127.0.0.1:%d?format=binary", ntohs(a.sin_port));
	snprintf(url[1], sizeof url[1], "udp://127.0.0.1:%d?format=json", ntohs(a.sin_port));
	assert_int_equal(wl_publisher_create(&p, &e), WL_OK);
	assert_int_equal(wl_publisher_add_udp(p, url[0], WL_PUB_JSON, &e), WL_OK);
	assert_int_equal(wl_publisher_add_udp(p, url[1], WL_PUB_BINARY, &e), WL_OK);
	memset(&pose, 0, sizeof pose);
	pose.session = 77;
	pose.seq = 5;
	pose.frame = 4;
	pose.id = 3;
	pose.x_m = 1.25;
	pose.y_m = 0.5;
	pose.heading_rad = NAN;
	pose.vx_mps = pose.vy_mps = pose.yaw_rate_radps = NAN;
	assert_int_equal(wl_publisher_send(p, &pose), 0);
	n = recv(fd, buf, sizeof buf, 0);
	assert_int_equal(n, WL_POSE_BIN_SIZE);
	assert_int_equal(wl_pose_bin_decode((uint8_t *)buf, (size_t)n, &back, &e), WL_OK);
	assert_int_equal(back.seq, 5);
	assert_near(back.x_m, 1.25, 0);
	n = recv(fd, buf, sizeof buf, 0);
	assert_true(n > 0 && buf[0] == '{');
	assert_int_equal(wl_pose_json_decode(buf, (size_t)n, &back, &e), WL_OK);
	assert_int_equal(back.id, 3);
	assert_true(isnan(back.heading_rad));
	wl_publisher_counts(p, &sent, &failed, NULL);
	assert_int_equal(sent, 2);
	assert_int_equal(failed, 0);
	wl_publisher_destroy(p);
	close(fd);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_filter_steady_state_dare),
	        cmocka_unit_test(test_filter_statsmodels),
	        cmocka_unit_test(test_filter_is_smoother_forward_pass),
	        cmocka_unit_test(test_filter_gate_and_restart),
	        cmocka_unit_test(test_filter_cfg_check),
	        cmocka_unit_test(test_latency_quantiles),
	        cmocka_unit_test(test_publisher_urls),
	        cmocka_unit_test(test_publisher_loopback),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
