/*
 * test_numfmt.c: the rounding rule for numbers shown to people
 * (core/numfmt.h), against the worked examples of
 * tests/data/numfmt-examples.csv (the PDG rule and the GUM's examples, each
 * row naming its source), the same under a decimal-comma locale, and
 * properties over many random values.
 */
#define _POSIX_C_SOURCE 200809L
#include <locale.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "core/csvio.h"
#include "core/numfmt.h"

#define MAX_EX 128

typedef struct {
	char fn[16], v_text[40], a_text[40], want[WL_NUMFMT_BUF];
	long line;
	double v, a;
} example;

typedef struct {
	example ex[MAX_EX];
	int n;
} examples;

static wl_status add_row(const wl_csv_row *row, void *ctx, wl_err *err)
{
	examples *s = ctx;
	example *e;
	(void)err;
	if (row->index == 0)
		return WL_OK;
	assert_true(row->nfields >= 4 && s->n < MAX_EX);
	e = &s->ex[s->n++];
	snprintf(e->fn, sizeof e->fn, "%s", row->fields[0]);
	snprintf(e->v_text, sizeof e->v_text, "%s", row->fields[1]);
	snprintf(e->a_text, sizeof e->a_text, "%s", row->fields[2]);
	snprintf(e->want, sizeof e->want, "%s", row->fields[3]);
	e->line = row->line;
	assert_true(wl_parse_double(row->fields[1], &e->v));
	e->a = NAN;
	if (row->fields[2][0])
		assert_true(wl_parse_double(row->fields[2], &e->a));
	return WL_OK;
}

/* Reads the examples (numbers parsed in the C locale). */
static void load_examples(examples *s)
{
	wl_err err;
	s->n = 0;
	if (wl_csv_read(WL_SOURCE_DIR "/tests/data/numfmt-examples.csv", add_row, s, &err) != WL_OK)
		fail_msg("%s", err.msg);
	assert_true(s->n >= 25);
}

/* Formats every example in the current locale; the number that differ. */
static int run_examples(const examples *s)
{
	int failed = 0;
	for (int i = 0; i < s->n; i++) {
		const example *e = &s->ex[i];
		char buf[WL_NUMFMT_BUF];
		if (strcmp(e->fn, "pm") == 0)
			wl_numfmt_pm(buf, e->v, e->a);
		else if (strcmp(e->fn, "value") == 0)
			wl_numfmt_value(buf, e->v, e->a);
		else if (strcmp(e->fn, "sig") == 0)
			wl_numfmt_sig(buf, e->v, (int)e->a);
		else if (strcmp(e->fn, "fixed") == 0)
			wl_numfmt_fixed(buf, e->v, (int)e->a);
		else
			fail_msg("numfmt-examples.csv:%ld: unknown function '%s'", e->line, e->fn);
		if (strcmp(buf, e->want) != 0) {
			print_error("numfmt-examples.csv:%ld: %s(%s, %s) gave '%s', wants '%s'\n", e->line,
			            e->fn, e->v_text, e->a_text, buf, e->want);
			failed++;
		}
	}
	return failed;
}

static examples EX;

/* PDG and GUM worked examples, and ours, from the shared file */
static void test_worked_examples(void **state)
{
	(void)state;
	load_examples(&EX);
	assert_int_equal(run_examples(&EX), 0);
}

/* the same strings under a decimal-comma locale (PITFALLS.md, "Locale") */
static void test_examples_decimal_comma(void **state)
{
	int failed;
	(void)state;
	load_examples(&EX);
	if (!setlocale(LC_ALL, "de_DE.UTF-8")) {
		skip();
		return;
	}
	failed = run_examples(&EX);
	setlocale(LC_ALL, "C");
	assert_int_equal(failed, 0);
}

/* The place of u: two significant digits for leading digits 100-354, one
 * for 355-949, and 950-999 round up to the next power of ten (PDG rule). */
static void test_place(void **state)
{
	double ur;
	(void)state;
	assert_int_equal(wl_numfmt_place(0.119, &ur), 2);
	assert_true(fabs(ur - 0.12) < 1e-15);
	assert_int_equal(wl_numfmt_place(0.367, &ur), 1);
	assert_true(fabs(ur - 0.4) < 1e-15);
	assert_int_equal(wl_numfmt_place(0.0968, &ur), 2);
	assert_true(fabs(ur - 0.1) < 1e-15);
	assert_int_equal(wl_numfmt_place(678, &ur), -2);
	assert_true(fabs(ur - 700) < 1e-9);
	assert_int_equal(wl_numfmt_place(1, &ur), 1);
	assert_int_equal(wl_numfmt_place(0, &ur), 0);
	assert_true(isnan(ur));
	assert_int_equal(wl_numfmt_place(NAN, NULL), 0);
}

/* Over random values and uncertainties across 24 decades: the printed
 * uncertainty has one or two significant digits, is within its rounding of
 * u, and the printed value is within half a unit of its last place of v. */
static void test_random_properties(void **state)
{
	unsigned long long x = 88172645463325252ULL;
	(void)state;
	setlocale(LC_ALL, "C");
	for (int i = 0; i < 20000; i++) {
		char buf[WL_NUMFMT_BUF], *pm;
		double r1, r2, r3, u, v, pv, pu, ur, half;
		int dec;
		x ^= x << 13, x ^= x >> 7, x ^= x << 17;
		r1 = (double)(x % 1000000) / 1e6;
		x ^= x << 13, x ^= x >> 7, x ^= x << 17;
		r2 = (double)(x % 1000000) / 1e6;
		x ^= x << 13, x ^= x >> 7, x ^= x << 17;
		r3 = (double)(x % 1000000) / 1e6;
		u = pow(10, -5 + 9 * r1);
		v = (r3 - 0.5) * 2 * pow(10, -3 + 8 * r2);
		dec = wl_numfmt_place(u, &ur);
		wl_numfmt_pm(buf, v, u);
		if (buf[0] == '(') /* exponent form: checked by the examples */
			continue;
		pm = strstr(buf, " \xc2\xb1 ");
		assert_non_null(pm);
		*pm = '\0';
		if (!wl_parse_double(buf, &pv))
			fail_msg("v %.17g u %.17g: '%s'", v, u, buf);
		assert_true(wl_parse_double(pm + 4, &pu));
		half = 0.5 * pow(10, -dec) * (1 + 1e-9);
		assert_true(fabs(pv - v) <= half + 1e-12 * fabs(v));
		assert_true(fabs(pu - ur) <= 1e-9 * ur);
		assert_true(fabs(pu - u) <= half + 1e-12 * u);
		/* significant digits of the printed u: strip leading zeros and point */
		{
			const char *p = pm + 4;
			int n = 0, started = 0;
			for (; *p; p++) {
				if (*p == '.')
					continue;
				if (*p != '0')
					started = 1;
				if (started)
					n++;
			}
			if (dec >= 0)
				assert_true(n == 1 || n == 2);
		}
	}
}

/* wl_numfmt_exact: the shortest text that reads back exactly, '.' decimals */
static void test_exact(void **state)
{
	char buf[WL_NUMFMT_BUF];
	double back;
	unsigned long long x = 0x9E3779B97F4A7C15ULL;
	(void)state;
	setlocale(LC_ALL, "C");
	assert_string_equal(wl_numfmt_exact(buf, 0.4000094223), "0.4000094223");
	assert_string_equal(wl_numfmt_exact(buf, 0.1), "0.1");
	assert_string_equal(wl_numfmt_exact(buf, 1.0 / 3.0), "0.3333333333333333");
	assert_string_equal(wl_numfmt_exact(buf, -2.5e-7), "-2.5e-07");
	for (int i = 0; i < 10000; i++) {
		double v;
		x ^= x << 13, x ^= x >> 7, x ^= x << 17;
		memcpy(&v, &x, sizeof v);
		if (!isfinite(v))
			continue;
		wl_numfmt_exact(buf, v);
		back = strtod(buf, NULL); /* subnormals too (wl_parse_double refuses ERANGE) */
		assert_true(back == v);
	}
	if (setlocale(LC_ALL, "de_DE.UTF-8")) {
		assert_string_equal(wl_numfmt_exact(buf, 0.4000094223), "0.4000094223");
		setlocale(LC_ALL, "C");
	}
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_worked_examples), cmocka_unit_test(test_examples_decimal_comma),
	        cmocka_unit_test(test_place),           cmocka_unit_test(test_random_properties),
	        cmocka_unit_test(test_exact),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
