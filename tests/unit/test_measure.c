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

#include "measure/measure.h"

#define PI 3.14159265358979323846

/* Gander, Golub & Strebel 1994, BIT 34:558, example data; reference rows in
 * /work/shared/REFERENCES.md (geometric recomputed with scipy.optimize.least_squares,
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

static void check_alg(const char *name, wl_status (*fit)(const double *, const double *, size_t, wl_circle *,
							  wl_err *),
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
	/* REFERENCES.md, GGS 1994 data: Kasa row (numpy.linalg.lstsq) */
	check_alg("kasa", wl_measure_fit_kasa, 4.742331, 3.835123, 4.108762, 0.4827507);
	/* REFERENCES.md, GGS 1994 data: Pratt 1987 row */
	check_alg("pratt", wl_measure_fit_pratt, 4.615482, 2.807354, 4.911302, 0.4610572);
	/* REFERENCES.md, GGS 1994 data: Taubin 1991 row */
	check_alg("taubin", wl_measure_fit_taubin, 4.613933, 2.795209, 4.879213, 0.4572958);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_ggs_geometric),
		cmocka_unit_test(test_ggs_algebraic),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
