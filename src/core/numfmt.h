/*
 * numfmt.h: numbers for people.  A measured value is shown with as many
 * digits as its uncertainty supports, and no more: "2.49994 ± 0.00029",
 * never "2.499941112 ± 0.0002936085".  Files for programs (summary.csv,
 * summary.json) keep full precision and do not use this; terminal summaries,
 * report pages and plot labels do.
 *
 * The rule (the Particle Data Group's, Review of Particle Physics,
 * "Introduction", rounding; GUM, JCGM 100:2008, 7.2.6 asks for at most two
 * significant digits of an uncertainty):
 *   - take the three leading digits of the uncertainty u as written;
 *     100-354: quote u with two significant digits; 355-949: with one;
 *     950-999: round u up to the next power of ten and quote it with two
 *     (0.0968 -> 0.10);
 *   - round the value to the same decimal place as the rounded u.
 * Rounding is to nearest, half away from zero, on the decimal digits of the
 * number as "%.15g" shows it (so 2.675 rounds to 2.68, as a person reads it,
 * though the binary double lies just below).  The same rule is transliterated
 * to JavaScript for the report pages (src/report/assets/common.js); both are
 * tested against tests/data/numfmt-examples.csv.
 *
 * Output: '.' decimals whatever the locale, '-' for minus, never "-0",
 * " ± " (UTF-8) between value and uncertainty.  Small magnitudes (value and
 * uncertainty under 1e-3) that would need more than 6 decimals, and values of
 * 1e6 and more, take a common exponent: "(7.44 ± 0.32)e-5".
 *
 * All functions write into buf (at least WL_NUMFMT_BUF bytes) and return it;
 * none fails.  Non-finite values give "n/a".
 */
#ifndef WL_NUMFMT_H
#define WL_NUMFMT_H

#define WL_NUMFMT_BUF 96

/* The decimal place the uncertainty u (> 0, finite) supports under the rule:
 * the number of decimals of the rounded u (negative for tens, hundreds...).
 * *u_rounded (may be NULL) receives u rounded to it.  Returns 0 and leaves
 * *u_rounded NaN for u not finite or <= 0. */
int wl_numfmt_place(double u, double *u_rounded);

/* v rounded to `decimals` places (negative: to tens, hundreds...), in plain
 * notation: wl_numfmt_fixed(buf, 12345, -2) is "12300". */
char *wl_numfmt_fixed(char *buf, double v, int decimals);

/* "v ± u", both rounded by the rule.  When u is not finite or not > 0, v
 * alone with 3 significant digits (wl_numfmt_sig). */
char *wl_numfmt_pm(char *buf, double v, double u);

/* v alone, rounded to the place that u supports (for a table column of
 * values whose uncertainties are shown elsewhere).  u not finite or <= 0:
 * 3 significant digits. */
char *wl_numfmt_value(char *buf, double v, double u);

/* v with `sig` significant digits (1..15) but every integer digit kept
 * (12345 with 3 is "12345"); plain notation for 1e-4 <= |v| < 1e6 and 0,
 * else "7.44e-5". */
char *wl_numfmt_sig(char *buf, double v, int sig);

/* For files, not people: the shortest "%.{15,16,17}g" text of v that reads
 * back as exactly v, '.' decimals ("nan", "inf" for non-finite v). */
char *wl_numfmt_exact(char *buf, double v);

#endif
