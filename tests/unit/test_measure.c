/*
 * test_measure.c: unit tests of the measure stage (src/measure): circle fits
 * against published values, and the run measures on synthetic arcs whose
 * truth is known.
 */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "core/linalg.h"
#include "measure/measure.h"

#define PI 3.14159265358979323846

/* Gander, Golub & Strebel 1994, BIT 34:558, example data; reference rows in
 * tests/data/references.md (geometric recomputed with scipy.optimize.least_squares,
 * Kasa with numpy.linalg.lstsq) */
static const double ggs_x[6] = {1, 2, 5, 7, 9, 3};
static const double ggs_y[6] = {7, 6, 8, 7, 5, 7};

static double ggs_sigma(double cx, double cy, double r)
{
	double s = 0;
	for (int i = 0; i < 6; i++) {
		double e = hypot(ggs_x[i] - cx, ggs_y[i] - cy) - r;
		s += e * e;
	}
	return sqrt(s / 6);
}

static void test_ggs_geometric(void **state)
{
	wl_geofit f;
	(void)state;
	assert_int_equal(wl_measure_fit_geometric(ggs_x, ggs_y, 6, &f, NULL), WL_OK);
	/* Gander, Golub & Strebel 1994, geometric fit: (4.739782, 2.983533), 4.714226, sigma 0.4523271 */
	printf("GGS geometric: centre (%.9f, %.9f) r %.9f rms %.9f (%d iterations)\n", f.cx_m, f.cy_m, f.r_m,
	       f.rms_m, f.iterations);
	assert_true(fabs(f.cx_m - 4.739782) < 1e-6);
	assert_true(fabs(f.cy_m - 2.983533) < 1e-6);
	assert_true(fabs(f.r_m - 4.714226) < 1e-6);
	assert_true(fabs(f.rms_m - 0.4523271) < 1e-7);
}

static void check_alg(const char *name,
                      wl_status (*fit)(const double *, const double *, size_t, wl_circle *, wl_err *),
                      double cx, double cy, double r, double sigma)
{
	wl_circle c;
	wl_err err;
	assert_int_equal(fit(ggs_x, ggs_y, 6, &c, &err), WL_OK);
	printf("GGS %s: centre (%.9f, %.9f) r %.9f sigma %.9f\n", name, c.cx_m, c.cy_m, c.r_m,
	       ggs_sigma(c.cx_m, c.cy_m, c.r_m));
	assert_true(fabs(c.cx_m - cx) < 1e-6);
	assert_true(fabs(c.cy_m - cy) < 1e-6);
	assert_true(fabs(c.r_m - r) < 1e-6);
	/* sigma printed to 7 digits in the table */
	assert_true(fabs(ggs_sigma(c.cx_m, c.cy_m, c.r_m) - sigma) < 5e-7);
}

static void test_ggs_algebraic(void **state)
{
	(void)state;
	/* tests/data/references.md, GGS 1994 data: Kasa row (numpy.linalg.lstsq) */
	check_alg("kasa", wl_measure_fit_kasa, 4.742331, 3.835123, 4.108762, 0.4827507);
	/* tests/data/references.md, GGS 1994 data: Pratt 1987 row */
	check_alg("pratt", wl_measure_fit_pratt, 4.615482, 2.807354, 4.911302, 0.4610572);
	/* tests/data/references.md, GGS 1994 data: Taubin 1991 row */
	check_alg("taubin", wl_measure_fit_taubin, 4.613933, 2.795209, 4.879213, 0.4572958);
}

/* ---- synthetic runs --------------------------------------------------------
 * Kinematic model (ours, documented in docs/measure.md): the body point moves
 * at speed v along a mean path (a circle of radius R about (1.5, 1.0), or a
 * line) while its heading oscillates about the path tangent by
 * A·sin(ωt + ψ).  The lateral velocity is then v·sin(A sin(ωt+ψ)) ≈ v·A·sin(ωt+ψ),
 * so the body sways to the left of the mean path by s(t) = -(v·A/ω)·cos(ωt+ψ):
 * heading and sway are the same oscillation, a quarter period apart.  The
 * truth is exact for the mean path (radius R) and the heading; the sway
 * amplitude is v·A/ω.  Position noise is white or AR(1) with the given
 * marginal standard deviation, independent in x and y. */

typedef struct {
	uint64_t s;
} rng;

static uint64_t rng_u64(rng *r) /* splitmix64 */
{
	uint64_t z = (r->s += 0x9e3779b97f4a7c15ULL);
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
	z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
	return z ^ (z >> 31);
}

static double rng_unif(rng *r)
{
	return ((double)(rng_u64(r) >> 11) + 0.5) / 9007199254740992.0;
}

static double rng_gauss(rng *r)
{
	double u = rng_unif(r), v = rng_unif(r);
	return sqrt(-2 * log(u)) * cos(2 * PI * v);
}

typedef struct {
	double R_m; /* 0: straight */
	int dir;    /* +1 counter-clockwise, -1 clockwise */
	double v_mps, T_s, fps;
	double amp_rad, f_hz;
	double noise_m, ar; /* marginal SD and AR(1) coefficient (0: white) */
	int ma;             /* > 1: the noise is instead white noise of SD noise_m
	                     * averaged over ma frames, as a smoother leaves it */
	double heading_noise_rad;
} synth_cfg;

#define SYN_MAX 2000

typedef struct {
	size_t n;
	double t[SYN_MAX], x[SYN_MAX], y[SYN_MAX], h[SYN_MAX], sp[SYN_MAX], yr[SYN_MAX];
	unsigned char meas[SYN_MAX];
} synth_run;

static void synth_make(const synth_cfg *c, rng *r, synth_run *o)
{
	double w = 2 * PI * c->f_hz, th0 = 2 * PI * rng_unif(r), ps = 2 * PI * rng_unif(r);
	double sway_amp = c->v_mps * c->amp_rad / w, ex = 0, ey = 0, k = sqrt(1 - c->ar * c->ar), hist[128];
	o->n = (size_t)(c->T_s * c->fps) + 1;
	assert_true(o->n <= SYN_MAX);
	ex = c->noise_m * rng_gauss(r);
	ey = c->noise_m * rng_gauss(r);
	for (size_t i = 0; i < o->n; i++) {
		double t = (double)i / c->fps, s = -sway_amp * cos(w * t + ps),
		       dev = c->amp_rad * sin(w * t + ps);
		double px, py, tang;
		if (i > 0) {
			ex = c->ar * ex + k * c->noise_m * rng_gauss(r);
			ey = c->ar * ey + k * c->noise_m * rng_gauss(r);
		}
		if (c->R_m > 0) {
			double th = th0 + c->dir * c->v_mps * t / c->R_m, rad = c->R_m - c->dir * s;
			px = 1.5 + rad * cos(th);
			py = 1.0 + rad * sin(th);
			tang = th + c->dir * PI / 2;
		} else {
			tang = th0;
			px = 0.2 + c->v_mps * t * cos(tang) - s * sin(tang);
			py = 0.3 + c->v_mps * t * sin(tang) + s * cos(tang);
		}
		if (c->ma > 1) { /* running mean of the last ma white draws */
			double nx = c->noise_m * rng_gauss(r), ny = c->noise_m * rng_gauss(r);
			if (i == 0)
				for (int j = 0; j < c->ma; j++)
					hist[2 * j] = c->noise_m * rng_gauss(r),
					         hist[2 * j + 1] = c->noise_m * rng_gauss(r);
			hist[2 * (i % (size_t)c->ma)] = nx;
			hist[2 * (i % (size_t)c->ma) + 1] = ny;
			ex = ey = 0;
			for (int j = 0; j < c->ma; j++)
				ex += hist[2 * j] / c->ma, ey += hist[2 * j + 1] / c->ma;
		}
		o->t[i] = t;
		o->x[i] = px + ex;
		o->y[i] = py + ey;
		o->h[i] = atan2(sin(tang + dev), cos(tang + dev)) + c->heading_noise_rad * rng_gauss(r);
		o->sp[i] = c->v_mps;
		o->yr[i] = (c->R_m > 0 ? c->dir * c->v_mps / c->R_m : 0) + c->amp_rad * w * cos(w * t + ps);
		o->meas[i] = 1;
	}
}

static void synth_default(synth_cfg *c, double R, int dir)
{
	c->R_m = R;
	c->dir = dir;
	c->v_mps = 0.1;
	c->T_s = 30;
	c->fps = 30;
	c->amp_rad = 20 * PI / 180;
	c->f_hz = 1.2;
	c->noise_m = 0.002;
	c->ar = 0;
	c->ma = 0;
	c->heading_noise_rad = 1 * PI / 180;
}

static void run_synth(const synth_run *s, wl_measure_result *res)
{
	wl_measure_input in = {s->n, s->t, s->x, s->y, s->h, s->sp, s->yr, s->meas, NULL};
	wl_measure_opts o;
	wl_err err;
	wl_measure_opts_init(&o);
	o.body_diameter_m = 0.1;
	assert_int_equal(wl_measure_run(&in, &o, res, &err), WL_OK);
}

static void set_noise(synth_cfg *c, int kind)
{
	c->ar = kind == 1 ? 0.9 : 0;
	if (kind == 2) { /* 6 mm white noise averaged over 9 frames: 2 mm, smooth */
		c->ma = 9;
		c->noise_m = 0.006;
	}
}

static const char *const noise_name[3] = {"white", "ar1  ", "ma9  "};

static const double radii[5] = {0.2, 0.5, 1, 2, 5};

/* Radius, sign, oscillation frequency and amplitude and sway on one draw
 * per radius and direction, with white and with AR(1) noise. */
static void test_synth_arcs(void **state)
{
	static synth_run s;
	(void)state;
	for (int noise = 0; noise < 3; noise++)
		for (int i = 0; i < 5; i++)
			for (int dir = -1; dir <= 1; dir += 2) {
				synth_cfg c;
				wl_measure_result r;
				rng g = {(uint64_t)(1000 + 10 * i + dir + 100 * noise)};
				double tol = radii[i] >= 5 ? 0.05 : 0.02, truth_sway;
				synth_default(&c, radii[i], dir);
				set_noise(&c, noise);
				truth_sway = c.v_mps * c.amp_rad / (2 * PI * c.f_hz);
				synth_make(&c, &g, &s);
				run_synth(&s, &r);
				printf("%s R %4.1f dir %+d: radius %+.5f (err %+.3f%%) arc %7.1f deg ci "
				       "[%.5f, %.5f] "
				       "ar %d yaw %.4f Hz %.3f deg sway %.4f Hz %.5f m (%+.1f%%)\n",
				       noise_name[noise], radii[i], dir, r.radius_m,
				       100 * (fabs(r.radius_m) / radii[i] - 1), r.arc_deg,
				       r.curvature_ci95_per_m[0], r.curvature_ci95_per_m[1], r.ar_order,
				       r.yaw_osc_freq_hz, r.yaw_osc_amp_deg, r.sway_osc_freq_hz, r.sway_amp_m,
				       100 * (r.sway_amp_m / truth_sway - 1));
				assert_false(r.straight);
				assert_true(r.radius_m * dir > 0); /* sign: counter-clockwise positive */
				assert_true(r.curvature_per_m * dir > 0);
				assert_true(fabs(fabs(r.radius_m) / radii[i] - 1) < tol);
				assert_true(fabs(r.yaw_osc_freq_hz - 1.2) < 0.02);
				assert_true(fabs(r.yaw_osc_amp_deg / 20 - 1) < 0.10);
				assert_true(fabs(r.sway_osc_freq_hz - 1.2) < 0.02);
				/* smoothed noise has ~6x the white noise's power at 1.2 Hz
				 * (a 0.3 s running mean barely damps it), so the sway
				 * amplitude's spread is ~5%: 15% there, 10% otherwise */
				assert_true(fabs(r.sway_amp_m / truth_sway - 1) < (noise == 2 ? 0.15 : 0.10));
				assert_true(fabs(r.radius_body_diameters - radii[i] / 0.1) <
				            tol * radii[i] / 0.1);
				assert_true(fabs(r.mean_speed_mps - 0.1) < 1e-9);
				assert_true(fabs(r.duration_s - 30) < 1e-9);
				assert_true(fabs(r.tracked_fraction - 1) < 1e-12);
				/* the mean yaw rate is the turn rate v/R plus a zero-mean oscillation */
				assert_true(fabs(r.mean_yaw_rate_degps - dir * 0.1 / radii[i] * 180 / PI) <
				            1.0);
			}
}

/* Calibration of the 95% curvature interval: over 100 seeded draws per case
 * the interval of the whole run pipeline must cover the true curvature at
 * least 90 times, and the reported standard error must match the observed
 * spread of the estimates: within 0.75-1.6 (100 draws fix the ratio to about
 * ±7%, and for smoothed noise the residual model's long-run variance varies
 * by a factor 2 between draws; over 300 draws the ratios were 0.89-1.05 for
 * white and AR(1) noise and 1.02-1.17 for smoothed noise).  Noise: white,
 * AR(1) with coefficient 0.9, and smoothed (a 9-frame running mean).  To keep
 * the run time to seconds each radius is run in one direction
 * (alternating); both directions are covered by test_synth_arcs. */
static int coverage(double R, int dir, int kind, int draws, double *mean_halfwidth, double *se_ratio)
{
	static synth_run s;
	int hits = 0;
	double ss = 0, sse = 0;
	*mean_halfwidth = 0;
	for (int k = 0; k < draws; k++) {
		synth_cfg c;
		wl_measure_result r;
		double se, err;
		rng g = {(uint64_t)(77 + 1000 * k)};
		synth_default(&c, R, dir);
		set_noise(&c, kind);
		synth_make(&c, &g, &s);
		run_synth(&s, &r);
		se = r.curvature_se_per_m;
		err = r.curvature_per_m - dir / R;
		if (r.curvature_ci95_per_m[0] <= dir / R && dir / R <= r.curvature_ci95_per_m[1])
			hits++;
		*mean_halfwidth += 1.959964 * se / draws;
		ss += err * err;
		sse += se * se;
	}
	/* root-mean reported variance over the observed mean squared error */
	*se_ratio = sqrt(sse / ss);
	return hits;
}

static void test_interval_coverage(void **state)
{
	(void)state;
	for (int noise = 0; noise < 3; noise++)
		for (int i = 0; i < 5; i++) {
			double hw, ratio;
			int dir = i % 2 ? -1 : 1;
			int hits = coverage(radii[i], dir, noise, 100, &hw, &ratio);
			printf("coverage %s R %.1f dir %+d: %d/100 (mean half-width %.5f /m = %.3f%% of "
			       "curvature; "
			       "reported/observed error %.2f)\n",
			       noise_name[noise], radii[i], dir, hits, hw, 100 * hw * radii[i], ratio);
			assert_true(hits >= 90);
			assert_true(ratio > 0.75 && ratio < 1.6);
		}
}

/* A straight run is reported straight, and its curvature interval holds 0. */
static void test_synth_straight(void **state)
{
	static synth_run s;
	(void)state;
	for (int noise = 0; noise < 2; noise++) {
		synth_cfg c;
		wl_measure_result r;
		rng g = {(uint64_t)(555 + noise)};
		synth_default(&c, 0, 1);
		c.ar = noise ? 0.9 : 0;
		synth_make(&c, &g, &s);
		run_synth(&s, &r);
		printf("straight %s: curvature %+.5f ci [%+.5f, %+.5f] arc %.2f deg straightness %.4f yaw "
		       "%.4f Hz "
		       "%.3f deg sway %.5f m\n",
		       noise ? "ar1" : "white", r.curvature_per_m, r.curvature_ci95_per_m[0],
		       r.curvature_ci95_per_m[1], r.arc_deg, r.straightness, r.yaw_osc_freq_hz,
		       r.yaw_osc_amp_deg, r.sway_amp_m);
		assert_true(r.straight);
		assert_true(isnan(r.radius_m));
		assert_true(isnan(r.radius_body_diameters));
		assert_true(r.curvature_ci95_per_m[0] <= 0 && r.curvature_ci95_per_m[1] >= 0);
		assert_true(fabs(r.net_displacement_m - 3.0) < 0.01);
		assert_true(fabs(r.yaw_osc_freq_hz - 1.2) < 0.02);
		assert_true(fabs(r.yaw_osc_amp_deg / 20 - 1) < 0.10);
		assert_true(fabs(r.heading_drift_degps) < 0.1);
	}
}

/* PITFALLS.md: Kasa fits underestimate radii on short arcs.  On a 20° arc of
 * radius 2 m with 5 mm noise the geometric fit stays close while Kasa falls
 * short, averaged over 50 draws; the arc is reported beside the radius. */
static void test_short_arc_kasa_bias(void **state)
{
	double kasa = 0, geo = 0, arc = 0, x[301], y[301];
	(void)state;
	for (int k = 0; k < 50; k++) {
		rng g = {(uint64_t)(900 + k)};
		wl_circle c;
		wl_geofit f;
		for (int i = 0; i < 301; i++) {
			double th = 0.3 + (20 * PI / 180) * i / 300.0;
			x[i] = 2 * cos(th) + 0.005 * rng_gauss(&g);
			y[i] = 2 * sin(th) + 0.005 * rng_gauss(&g);
		}
		assert_int_equal(wl_measure_fit_kasa(x, y, 301, &c, NULL), WL_OK);
		assert_int_equal(wl_measure_fit_geometric(x, y, 301, &f, NULL), WL_OK);
		kasa += c.r_m / 50;
		geo += f.r_m / 50;
		arc += fabs(wl_measure_swept_angle(x, y, 301, f.cx_m, f.cy_m)) * 180 / PI / 50;
	}
	printf("short arc (20 deg, R 2 m, 5 mm noise): mean Kasa radius %.4f m, geometric %.4f m, arc %.2f "
	       "deg\n",
	       kasa, geo, arc);
	assert_true(fabs(arc - 20) < 0.5);
	assert_true(kasa < 1.97);
	assert_true(fabs(geo - 2) < 0.02);
}

/* PITFALLS.md: uneven time steps.  Jittered frame times (±8 ms) and 10% of
 * the rows lost (no position, no heading) leave the radius and the
 * oscillation right, because everything works from t_s. */
static void test_uneven_times_and_gaps(void **state)
{
	static synth_run s;
	synth_cfg c;
	wl_measure_result r;
	rng g = {4242};
	size_t lost = 0;
	(void)state;
	synth_default(&c, 1.0, 1);
	synth_make(&c, &g, &s);
	{
		double w = 2 * PI * c.f_hz, sa = c.v_mps * c.amp_rad / w;
		for (size_t i = 0; i < s.n; i++) {
			double t = (double)i / c.fps + (i ? 0.008 * (2 * rng_unif(&g) - 1) : 0),
			       th = c.v_mps * t;
			double sw = -sa * cos(w * t), dev = c.amp_rad * sin(w * t);
			s.t[i] = t;
			s.x[i] = (1 - sw) * cos(th) + 0.002 * rng_gauss(&g);
			s.y[i] = (1 - sw) * sin(th) + 0.002 * rng_gauss(&g);
			s.h[i] = atan2(sin(th + PI / 2 + dev), cos(th + PI / 2 + dev));
			s.meas[i] = 1;
			if (i > 0 && rng_unif(&g) < 0.1) {
				s.x[i] = s.y[i] = s.h[i] = NAN;
				s.meas[i] = 0;
				lost++;
			}
		}
	}
	run_synth(&s, &r);
	printf("uneven times, %zu of %zu rows lost: radius %.5f yaw %.4f Hz %.3f deg tracked %.3f\n", lost,
	       s.n, r.radius_m, r.yaw_osc_freq_hz, r.yaw_osc_amp_deg, r.tracked_fraction);
	assert_true(fabs(r.radius_m - 1) < 0.02);
	assert_true(fabs(r.yaw_osc_freq_hz - 1.2) < 0.02);
	assert_true(fabs(r.yaw_osc_amp_deg / 20 - 1) < 0.10);
	assert_true(fabs(r.tracked_fraction - (double)(s.n - lost) / (double)s.n) < 1e-12);
	assert_int_equal(r.n_used, s.n - lost);
}

/* Errors: too few points, non-finite input, collinear points for the
 * algebraic fits, times that go backwards. */
static void test_errors(void **state)
{
	double x[5] = {0, 1, 2, 3, 4}, y[5] = {0, 1, 2, 3, 4}, t[5] = {0, 1, 2, 2, 3};
	wl_circle c;
	wl_geofit f;
	wl_err err;
	wl_measure_input in = {5, t, x, y, NULL, NULL, NULL, NULL, NULL};
	wl_measure_opts o;
	wl_measure_result r;
	(void)state;
	assert_int_equal(wl_measure_fit_taubin(x, y, 2, &c, &err), WL_EINVAL);
	assert_int_equal(wl_measure_fit_kasa(x, y, 5, &c, &err), WL_EINVAL);
	assert_non_null(strstr(err.msg, "collinear"));
	assert_int_equal(wl_measure_fit_pratt(x, y, 5, &c, &err), WL_EINVAL);
	/* a line is an ordinary case for the geometric fit: curvature 0 */
	assert_int_equal(wl_measure_fit_geometric(x, y, 5, &f, &err), WL_OK);
	assert_true(fabs(f.kappa_per_m) < 1e-9);
	y[2] = NAN;
	assert_int_equal(wl_measure_fit_geometric(x, y, 5, &f, &err), WL_EINVAL);
	wl_measure_opts_init(&o);
	assert_int_equal(wl_measure_run(&in, &o, &r, &err), WL_EINVAL);
	assert_non_null(strstr(err.msg, "not after"));
}

/* The oscillation estimator on an exact sine sampled unevenly (frame times
 * jittered by ±10 ms) with a slow trend removed first: frequency, amplitude
 * and phase come back; a band without the peak gives another frequency. */
static void test_oscillation_exact_sine(void **state)
{
	static double t[1200], v[1200];
	rng g = {31};
	wl_osc o;
	(void)state;
	for (int i = 0; i < 1200; i++) {
		t[i] = i / 40.0 + (i ? 0.01 * (2 * rng_unif(&g) - 1) : 0);
		v[i] = 0.3 + 0.05 * sin(2 * PI * 0.73 * t[i] + 1.1);
	}
	assert_int_equal(wl_measure_oscillation(t, v, 1200, 0.1, 16, &o, NULL), WL_OK);
	printf("exact sine 0.73 Hz, 0.05, phase 1.1: %.6f Hz, %.6f, %.4f, r2 %.6f\n", o.freq_hz, o.amp,
	       o.phase_rad, o.r2);
	assert_true(fabs(o.freq_hz - 0.73) < 1e-4);
	assert_true(fabs(o.amp - 0.05) < 1e-4);
	assert_true(fabs(o.phase_rad - 1.1) < 1e-2);
	assert_true(o.r2 > 0.9999);
	assert_int_equal(wl_measure_oscillation(t, v, 1200, 2, 16, &o, NULL), WL_OK);
	assert_true(o.freq_hz >= 2 && o.amp < 0.005);
	assert_int_equal(wl_measure_oscillation(t, v, 10, 0.1, 16, &o, NULL), WL_EINVAL);
	assert_int_equal(wl_measure_oscillation(t, v, 1200, 3, 2, &o, NULL), WL_EINVAL);
}

/* A sine over 12.2 cycles (7 s at 15 frames/s, 1.7404 Hz: a run of the
 * robustness suite, seed 63), detrended by a least-squares quadratic first
 * as measure detrends the yaw: the amplitude and frequency come back
 * exactly.  Fitted after the detrend alone (the method before), the sine
 * lost the part the detrend took: amplitude 0.9974, 1.73999 Hz (numpy's
 * lstsq and scipy's bounded minimiser give the same figures). */
static void test_oscillation_after_detrend(void **state)
{
	enum { N = 105 };
	double t[N], v[N], A[9] = {0}, b[3] = {0}, tm = 2.066667 + 0.5 * (N - 1) / 15.0,
	                   ts = 0.5 * (N - 1) / 15.0;
	wl_osc o;
	(void)state;
	for (int i = 0; i < N; i++) {
		double u;
		t[i] = 2.066667 + i / 15.0;
		v[i] = sin(2 * PI * 1.740364658 * (t[i] - 0.1817) + 315.35 * PI / 180);
		u = (t[i] - tm) / ts;
		for (int j = 0; j < 3; j++) {
			b[j] += pow(u, j) * v[i];
			for (int k = 0; k < 3; k++)
				A[3 * j + k] += pow(u, j + k);
		}
	}
	assert_true(wl_solve(A, b, 3));
	for (int i = 0; i < N; i++) {
		double u = (t[i] - tm) / ts;
		v[i] -= b[0] + b[1] * u + b[2] * u * u;
	}
	assert_int_equal(wl_measure_oscillation(t, v, N, 0.4, 6, &o, NULL), WL_OK);
	printf("detrended sine, 12.2 cycles: %.6f Hz (1.740365), amplitude %.6f (1)\n", o.freq_hz, o.amp);
	assert_true(fabs(o.amp - 1) < 1e-4);
	assert_true(fabs(o.freq_hz - 1.740364658) < 1e-5);
}

/* ---- the uncertainty budget against a Monte-Carlo over the same inputs ---- */

/* A small generator (64-bit LCG, Knuth's MMIX constants) and Box-Muller
 * normals, so that every run sees the same draws. */
static uint64_t mc_state;
static double mc_u(void)
{
	mc_state = mc_state * 6364136223846793005ULL + 1442695040888963407ULL;
	return ((mc_state >> 11) + 0.5) / 9007199254740992.0;
}
static double mc_n(void)
{
	return sqrt(-2 * log(mc_u())) * cos(2 * PI * mc_u());
}

/* An invented scene (not a real experiment): a camera over a 2.4 m x 1.6 m
 * tank with six floor markers (centres and four corners each), a robot on a
 * circle of radius R about the tank centre at speed v on a marker plane h
 * above the floor, its heading wagging 10 degrees at 1 Hz, 20 s at 30 fps. */
typedef struct {
	const char *name;
	double tilt_deg, h_m, water_m, R_m;
	int w, hpx;
	double hfov_deg;
} mc_scene;

#define MC_N 600
#define MC_PTS 30

typedef struct {
	wl_camera truth;
	wl_calib_point pts[MC_PTS]; /* tank positions, true pixels */
	int npts;
	double u[MC_N], v[MC_N], fu[MC_N], fv[MC_N]; /* the robot's tracked pixels, and 3 cm ahead */
	double t[MC_N];
} mc_data;

static void mc_setup(const mc_scene *sc, mc_data *d)
{
	double eye[3] = {1.2, 0.8 - 2.0 * tan(sc->tilt_deg * PI / 180), 2.0}, at[3] = {1.2, 0.8, 0};
	double f = (sc->w / 2.0) / tan(sc->hfov_deg * PI / 360),
	       mk[6][2] = {{0.2, 0.2}, {1.2, 0.15}, {2.2, 0.2}, {2.2, 1.4}, {1.2, 1.45}, {0.2, 1.4}};
	wl_camera_init(&d->truth, sc->w, sc->hpx, f, f, (sc->w - 1) / 2.0, (sc->hpx - 1) / 2.0);
	assert_true(wl_camera_look_at(&d->truth, eye, at, 0));
	d->truth.water_depth_m = sc->water_m;
	d->truth.water_index = WL_WATER_INDEX;
	d->npts = 0;
	for (int m = 0; m < 6; m++)
		for (int c = 0; c < 5; c++) {
			wl_calib_point *p = &d->pts[d->npts++];
			double X[3] = {mk[m][0] + (c == 1 || c == 2 ? 0.06
			                           : c              ? -0.06
			                                            : 0),
			               mk[m][1] + (c == 2 || c == 3 ? 0.06
			                           : c              ? -0.06
			                                            : 0),
			               0};
			memset(p, 0, sizeof *p);
			snprintf(p->id, sizeof p->id, "%d.%d", m, c);
			p->x_m = X[0], p->y_m = X[1], p->z_m = 0;
			p->used = 1;
			assert_true(wl_camera_project_water(&d->truth, X, &p->u_px, &p->v_px));
		}
	for (int i = 0; i < MC_N; i++) {
		double t = i / 30.0, psi = 0.1 * t / sc->R_m,
		       hd = psi + PI / 2 + 10 * PI / 180 * sin(2 * PI * t);
		double X[3] = {1.2 + sc->R_m * cos(psi), 0.8 + sc->R_m * sin(psi), sc->h_m};
		double F[3] = {X[0] + 0.03 * cos(hd), X[1] + 0.03 * sin(hd), sc->h_m};
		d->t[i] = t;
		assert_true(wl_camera_project_water(&d->truth, X, &d->u[i], &d->v[i]));
		assert_true(wl_camera_project_water(&d->truth, F, &d->fu[i], &d->fv[i]));
		/* the tracker's noise, 0.2 px */
		d->u[i] += 0.2 * mc_n(), d->v[i] += 0.2 * mc_n();
	}
}

/* Calibrates from the points (pixels with noise px_sd) with the lens K of
 * focal f and principal point (cx, cy) and the water depth water_m. */
static void mc_calibrate(const mc_scene *sc, const mc_data *d, double f, double cx, double cy, double water_m,
                         double px_sd, wl_calib *cal)
{
	wl_calib_point pts[MC_PTS];
	wl_calib_opts o;
	wl_calib_report rep;
	wl_camera lens;
	wl_err err;
	memcpy(pts, d->pts, sizeof pts);
	for (int i = 0; i < d->npts; i++)
		pts[i].u_px += px_sd * mc_n(), pts[i].v_px += px_sd * mc_n();
	wl_camera_init(&lens, sc->w, sc->hpx, f, f, cx, cy);
	memset(&o, 0, sizeof o);
	o.width_px = sc->w, o.height_px = sc->hpx;
	o.lens = &lens;
	o.water_depth_m = water_m;
	o.water_index = WL_WATER_INDEX;
	o.plane_height_m = sc->h_m;
	o.outlier_px = 1e9;
	assert_int_equal(wl_calib_solve(pts, d->npts, &o, cal, &rep, &err), WL_OK);
}

/* The run as the tracker would see it through cal, on the plane h: positions,
 * speeds (central differences) and headings (towards the point ahead). */
static void mc_measure(const mc_data *d, const wl_calib *cal, double h, const wl_measure_sys *sys, double *x,
                       double *y, double *sp, double *hd, wl_measure_result *r)
{
	wl_measure_opts o;
	wl_measure_input in = {MC_N, d->t, x, y, hd, sp, NULL, NULL, NULL};
	wl_err err;
	for (int i = 0; i < MC_N; i++) {
		double fx, fy;
		assert_true(wl_calib_pixel_to_plane(cal, d->u[i], d->v[i], h, &x[i], &y[i]));
		assert_true(wl_calib_pixel_to_plane(cal, d->fu[i], d->fv[i], h, &fx, &fy));
		hd[i] = atan2(fy - y[i], fx - x[i]);
	}
	for (int i = 0; i < MC_N; i++) {
		int a = i ? i - 1 : i, b = i + 1 < MC_N ? i + 1 : i;
		sp[i] = hypot(x[b] - x[a], y[b] - y[a]) / (d->t[b] - d->t[a]);
	}
	wl_measure_opts_init(&o);
	assert_int_equal(wl_measure_run(&in, &o, r, &err), WL_OK);
	if (sys)
		assert_int_equal(wl_measure_budget(&in, &o, sys, h, NAN, r, &err), WL_OK);
}

/* The first-order budget (the camera part solved again for each input at
 * ± one standard deviation) against a Monte-Carlo that draws the same inputs
 * (the calibration points' pixel noise, the focal length, the principal
 * point, the plane height, the water depth), calibrates again each time and
 * measures the same tracked pixels: the systematic standard errors agree to
 * within 10% of the total interval's width (issue 12). */
static void mc_check(const mc_scene *sc, int ndraw)
{
	static double x[MC_N], y[MC_N], sp[MC_N], hd[MC_N];
	static double draws[400][WL_BM_N];
	mc_data d;
	wl_calib cal, cald;
	wl_measure_sys *sys;
	wl_measure_tolerances tol;
	wl_measure_result r, rd;
	wl_err err;
	const double px_sd = 0.3, f_given = (sc->w / 2.0) / tan(sc->hfov_deg * 1.02 * PI / 360);
	const double h_given = sc->h_m + 0.003, cx0 = (sc->w - 1) / 2.0, cy0 = (sc->hpx - 1) / 2.0;
	int ms[] = {WL_BM_CURVATURE, WL_BM_SPEED, WL_BM_STRAIGHTNESS, WL_BM_YAW_AMP};
	mc_state = 42;
	mc_setup(sc, &d);
	/* the lab's calibration: the points with noise, a field of view 2% wrong,
	 * the principal point at the centre; then the route is "hfov" */
	mc_calibrate(sc, &d, f_given, cx0, cy0, sc->water_m, px_sd, &cal);
	snprintf(cal.intrinsics_source, sizeof cal.intrinsics_source, "hfov");
	wl_measure_tolerances_init(&tol);
	tol.plane_height_sd_m = 0.003;
	tol.water_depth_sd_m = 0.005;
	assert_int_equal(wl_measure_sys_create(&cal, &tol, &sys, &err), WL_OK);
	mc_measure(&d, &cal, h_given, sys, x, y, sp, hd, &r);
	/* the Monte-Carlo: each draw a new calibration from the same inputs */
	for (int k = 0; k < ndraw; k++) {
		double f = f_given * (1 + tol.focal_sd_frac * mc_n());
		double cx = cx0 + tol.principal_sd_frac * sc->w * mc_n(),
		       cy = cy0 + tol.principal_sd_frac * sc->w * mc_n();
		double wd = sc->water_m > 0 ? sc->water_m + tol.water_depth_sd_m * mc_n() : 0;
		double h = h_given + tol.plane_height_sd_m * mc_n();
		/* the calibration's own noise: the points drawn again about the lab's */
		mc_calibrate(sc, &d, f, cx, cy, wd, px_sd, &cald);
		mc_measure(&d, &cald, h, NULL, x, y, sp, hd, &rd);
		draws[k][WL_BM_CURVATURE] = rd.curvature_per_m;
		draws[k][WL_BM_SPEED] = rd.mean_speed_mps;
		draws[k][WL_BM_STRAIGHTNESS] = rd.straightness;
		draws[k][WL_BM_YAW_AMP] = rd.yaw_osc_amp_deg;
	}
	for (size_t j = 0; j < sizeof ms / sizeof ms[0]; j++) {
		int m = ms[j];
		double mean = 0, ss = 0, sys_se = 0, width = 2 * 1.959964 * r.budget[m].total_se;
		for (int k = 0; k < ndraw; k++)
			mean += draws[k][m];
		mean /= ndraw;
		for (int k = 0; k < ndraw; k++)
			ss += (draws[k][m] - mean) * (draws[k][m] - mean);
		for (int s = 1; s < WL_BS_N; s++)
			if (isfinite(r.budget[m].se[s]))
				sys_se += r.budget[m].se[s] * r.budget[m].se[s];
		sys_se = sqrt(sys_se);
		printf("%s %s: first-order systematic se %.4g (fit %.4g, total %.4g; calib %.3g, plane %.3g, "
		       "intrinsics %.3g, water %.3g), Monte-Carlo sd %.4g over %d draws: difference %.1f%% "
		       "of the "
		       "interval's width\n",
		       sc->name, wl_budget_measure_key((wl_budget_measure)m), sys_se,
		       r.budget[m].se[WL_BS_FIT], r.budget[m].total_se, r.budget[m].se[WL_BS_CALIBRATION],
		       r.budget[m].se[WL_BS_PLANE_HEIGHT], r.budget[m].se[WL_BS_INTRINSICS],
		       r.budget[m].se[WL_BS_WATER_DEPTH], sqrt(ss / (ndraw - 1)), ndraw,
		       100 * fabs(sqrt(ss / (ndraw - 1)) - sys_se) / width);
		assert_true(fabs(sqrt(ss / (ndraw - 1)) - sys_se) <= 0.1 * width);
	}
	wl_measure_sys_destroy(sys);
}

static void test_budget_monte_carlo(void **state)
{
	static const mc_scene scenes[] = {
	        {"nadir 1080p, plane 0.25 m", 0, 0.25, 0, 0.5, 1920, 1080, 70},
	        {"tilted 20 deg 720p, plane 0.35 m", 20, 0.35, 0, 0.4, 1280, 720, 75},
	        {"floor under 0.2 m of water, plane 0.3 m", 5, 0.30, 0.20, 0.5, 1920, 1080, 70},
	};
	(void)state;
	for (size_t i = 0; i < sizeof scenes / sizeof scenes[0]; i++)
		mc_check(&scenes[i], 200);
}

/* ---- the verdict on a moved camera (docs/measure.md, "Verdict") ---------- */

/* A clean run from t0 to t1 (s): nothing else for the verdict to find. */
static void quiet_run(wl_measure_result *r, double t0, double t1)
{
	wl_summary_measures_init(r);
	r->t_start_s = t0;
	r->duration_s = t1 - t0;
	r->tracked_fraction = 1;
	r->straight = 0;
	r->arc_deg = 300;
	r->curvature_per_m = 2;
	r->fit_rms_m = 0.001;
}

static int has_reason(const wl_measure_result *r, const char *part)
{
	for (int i = 0; i < r->n_reasons; i++)
		if (strstr(r->reasons[i], part))
			return 1;
	return 0;
}

/* A crafted watch record like the one of e2e 0308: a move seen at 5.33 s,
 * the last still check at 4.80 s. */
static void bumped(wl_rawside *c, int reregistered, double rms_px)
{
	wl_rawside_init(c);
	c->enabled = 1;
	c->threshold_px = 0.5;
	c->min_markers = 3;
	c->n_moves = 1;
	c->moves[0].t_s = 5.3333;
	c->moves[0].last_still_t_s = 4.8;
	c->moves[0].shift_px = 5.4;
	c->moves[0].markers = reregistered ? 8 : 2;
	c->moves[0].reregistered = reregistered;
	c->moves[0].rms_px = reregistered ? rms_px : NAN;
	c->moves[0].turn_deg = reregistered ? 0.35 : NAN;
	c->moves[0].centre_shift_mm = reregistered ? 0.5 : NAN;
	if (!reregistered)
		c->suspect_from_t_s = 4.8; /* to the end */
}

static void test_verdict_camera(void **state)
{
	wl_rawside cam;
	wl_verdict_input v;
	wl_measure_result r;
	(void)state;
	wl_verdict_input_init(&v);
	v.camera = &cam;
	/* a move registered again that held (0.20 px RMS, under 2 x 0.5 px):
	 * a note with when and how far, the verdict stays ok */
	bumped(&cam, 1, 0.20);
	quiet_run(&r, 1.0, 10.0);
	v.t0_s = 1.0, v.t1_s = 10.0;
	wl_measure_verdict(&v, &r);
	printf("held move: %s: %s\n", wl_verdict_name(r.verdict), r.reasons[0]);
	assert_int_equal(r.verdict, WL_VERDICT_OK);
	assert_int_equal(r.n_reasons, 1);
	assert_true(has_reason(&r, "note: the camera moved between 4.80 s and 5.33 s"));
	assert_true(has_reason(&r, "turned 0.35 deg, centre 0.5 mm") && has_reason(&r, "from 8 markers"));
	/* the same move outside the run's span: nothing */
	quiet_run(&r, 6.0, 10.0);
	v.t0_s = 6.0, v.t1_s = 10.0;
	wl_measure_verdict(&v, &r);
	assert_int_equal(r.verdict, WL_VERDICT_OK);
	assert_int_equal(r.n_reasons, 0);
	/* registered again, but the new pose fits the markers badly (1.5 px
	 * against a 1 px limit): check */
	bumped(&cam, 1, 1.5);
	quiet_run(&r, 1.0, 10.0);
	v.t0_s = 1.0, v.t1_s = 10.0;
	wl_measure_verdict(&v, &r);
	printf("poor registration: %s: %s\n", wl_verdict_name(r.verdict), r.reasons[0]);
	assert_int_equal(r.verdict, WL_VERDICT_CHECK);
	assert_true(has_reason(&r, "fits the floor markers to only 1.50 px RMS (limit 1.00)"));
	assert_true(has_reason(&r, "calibrate --at 5.4"));
	/* a larger watch threshold widens the limit with it */
	cam.threshold_px = 1.0;
	quiet_run(&r, 1.0, 10.0);
	wl_measure_verdict(&v, &r);
	assert_int_equal(r.verdict, WL_VERDICT_OK);
	/* registered, how well not recorded (an older CLEAN.json): check */
	bumped(&cam, 1, NAN);
	quiet_run(&r, 1.0, 10.0);
	wl_measure_verdict(&v, &r);
	assert_int_equal(r.verdict, WL_VERDICT_CHECK);
	assert_true(has_reason(&r, "how well is not recorded"));
	/* too few markers: suspect from 4.80 s to the end; a run 1-10 s has
	 * 5.2 of its 9 s suspect (over half): reject */
	bumped(&cam, 0, NAN);
	quiet_run(&r, 1.0, 10.0);
	wl_measure_verdict(&v, &r);
	printf("suspect over half: %s: %s\n", wl_verdict_name(r.verdict), r.reasons[0]);
	assert_int_equal(r.verdict, WL_VERDICT_REJECT);
	assert_true(has_reason(&r, "5.2 s of the run from 4.80 s are suspect"));
	assert_true(has_reason(&r, "calibrate --at 5.4") && has_reason(&r, "keep them in view"));
	/* a run 0-8 s: 3.2 of 8 s suspect: check */
	quiet_run(&r, 0.0, 8.0);
	v.t0_s = 0.0, v.t1_s = 8.0;
	wl_measure_verdict(&v, &r);
	assert_int_equal(r.verdict, WL_VERDICT_CHECK);
	assert_true(has_reason(&r, "3.2 s of the run from 4.80 s are suspect"));
	/* a run that ended before the move: nothing */
	quiet_run(&r, 0.0, 4.5);
	v.t0_s = 0.0, v.t1_s = 4.5;
	wl_measure_verdict(&v, &r);
	assert_int_equal(r.verdict, WL_VERDICT_OK);
	assert_int_equal(r.n_reasons, 0);
	/* the suspect interval closed by a later registration (at 7 s): a run
	 * 6-10 s has 1 s suspect, and the registration is a note */
	cam.suspect_to_t_s = 7.0;
	cam.n_moves = 2;
	cam.moves[1] = cam.moves[0];
	cam.moves[1].t_s = 7.0;
	cam.moves[1].last_still_t_s = NAN; /* none agreed in between */
	cam.moves[1].reregistered = 1;
	cam.moves[1].markers = 5;
	cam.moves[1].rms_px = 0.3;
	cam.moves[1].turn_deg = 0.36;
	cam.moves[1].centre_shift_mm = 0.6;
	quiet_run(&r, 6.0, 10.0);
	v.t0_s = 6.0, v.t1_s = 10.0;
	wl_measure_verdict(&v, &r);
	assert_int_equal(r.verdict, WL_VERDICT_CHECK);
	assert_true(has_reason(&r, "1.0 s of the run from 6.00 s are suspect"));
	assert_true(has_reason(&r, "registered again from 5 markers"));
	/* no watch record (or the watch off): no camera reason */
	v.camera = NULL;
	quiet_run(&r, 1.0, 10.0);
	wl_measure_verdict(&v, &r);
	assert_int_equal(r.n_reasons, 0);
	cam.enabled = 0;
	v.camera = &cam;
	wl_measure_verdict(&v, &r);
	assert_int_equal(r.n_reasons, 0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_ggs_geometric),
	        cmocka_unit_test(test_verdict_camera),
	        cmocka_unit_test(test_ggs_algebraic),
	        cmocka_unit_test(test_synth_arcs),
	        cmocka_unit_test(test_synth_straight),
	        cmocka_unit_test(test_short_arc_kasa_bias),
	        cmocka_unit_test(test_uneven_times_and_gaps),
	        cmocka_unit_test(test_errors),
	        cmocka_unit_test(test_oscillation_exact_sine),
	        cmocka_unit_test(test_oscillation_after_detrend),
	        cmocka_unit_test(test_interval_coverage),
	        cmocka_unit_test(test_budget_monte_carlo),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
