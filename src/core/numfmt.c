/*
 * numfmt.c: the rounding rule for numbers shown to people (see numfmt.h).
 * Rounding works on the decimal digits of the number ("%.14e", i.e. 15
 * significant digits) as strings, so that the result is the one a person
 * would get from the printed value, the same in C and in the report's
 * JavaScript, and independent of the locale (no printf of a fraction here
 * but the digits themselves).
 */
#include "core/numfmt.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define NDIG 15

/* The 15 significant digits of |v| (v finite, != 0) and the exponent of the
 * first: |v| = 0.d0 d1 ... d14 x 10^(e + 1). */
static void digits_of(double v, char d[NDIG + 1], int *e)
{
	char tmp[40];
	int k = 0;
	snprintf(tmp, sizeof tmp, "%.*e", NDIG - 1, fabs(v));
	for (const char *p = tmp; *p && *p != 'e' && k < NDIG; p++)
		if (*p >= '0' && *p <= '9')
			d[k++] = *p;
	d[k] = '\0';
	*e = atoi(strchr(tmp, 'e') + 1);
}

/* Kept digits of |v| rounded (half away from zero) to the place 10^-dec;
 * returns them in k (no leading zeros but "0" for zero) so that the rounded
 * |v| is k x 10^-dec. */
static void round_digits(double v, int dec, char *k, size_t cap)
{
	char d[NDIG + 1];
	int e, keep, i, n;
	if (v == 0) {
		snprintf(k, cap, "0");
		return;
	}
	digits_of(v, d, &e);
	keep = e + dec + 1; /* digits at places >= 10^-dec */
	if (keep < 0) {
		snprintf(k, cap, "0");
		return;
	}
	if (keep > NDIG) { /* more places than digits: pad with zeros */
		snprintf(k, cap, "%s%0*d", d, keep - NDIG, 0);
		return;
	}
	/* k = "0" + the first keep digits, plus one when the next is >= 5 */
	k[0] = '0';
	memcpy(k + 1, d, (size_t)keep);
	n = keep + 1;
	k[n] = '\0';
	if (keep < NDIG && d[keep] >= '5') {
		for (i = n - 1; i >= 0; i--) {
			if (k[i] == '9') {
				k[i] = '0';
				continue;
			}
			k[i]++;
			break;
		}
	}
	/* drop leading zeros, keep one */
	for (i = 0; i < n - 1 && k[i] == '0'; i++)
		;
	memmove(k, k + i, (size_t)(n - i) + 1);
}

/* Writes [-]k x 10^-decimals in plain notation. */
static char *place_point(char *buf, int neg, const char *k, int decimals)
{
	size_t len = strlen(k), pos = 0;
	int zero = strcmp(k, "0") == 0;
	if (neg && !zero)
		buf[pos++] = '-';
	if (decimals <= 0) {
		snprintf(buf + pos, WL_NUMFMT_BUF - pos, "%s%.*s", k, zero ? 0 : -decimals,
		         "000000000000000000000000000000");
		return buf;
	}
	if (len < (size_t)decimals + 1) /* leading zeros: 0.00k */
		snprintf(buf + pos, WL_NUMFMT_BUF - pos, "0.%.*s%s", (int)((size_t)decimals - len),
		         "000000000000000000000000000000", k);
	else
		snprintf(buf + pos, WL_NUMFMT_BUF - pos, "%.*s.%s", (int)(len - (size_t)decimals), k,
		         k + len - (size_t)decimals);
	return buf;
}

static int clamp_dec(int d)
{
	return d > 30 ? 30 : d < -30 ? -30 : d;
}

char *wl_numfmt_fixed(char *buf, double v, int decimals)
{
	char k[NDIG + 40];
	if (!isfinite(v)) {
		snprintf(buf, WL_NUMFMT_BUF, "n/a");
		return buf;
	}
	decimals = clamp_dec(decimals);
	round_digits(v, decimals, k, sizeof k);
	return place_point(buf, v < 0, k, decimals);
}

int wl_numfmt_place(double u, double *u_rounded)
{
	char d[NDIG + 1], k[NDIG + 40];
	int e, lead, dec;
	if (!isfinite(u) || !(u > 0)) {
		if (u_rounded)
			*u_rounded = NAN;
		return 0;
	}
	digits_of(u, d, &e);
	lead = (d[0] - '0') * 100 + (d[1] - '0') * 10 + (d[2] - '0');
	if (lead <= 354)
		dec = 1 - e; /* two significant digits */
	else
		dec = -e; /* one; or 950-999, which round up to 10^(e+1) with two */
	if (u_rounded) {  /* integer digits parse alike in every locale */
		round_digits(u, clamp_dec(dec), k, sizeof k);
		*u_rounded = strtod(k, NULL) * pow(10, -clamp_dec(dec));
	}
	return dec;
}

/* Exponent of the leading digit of |v| (v != 0). */
static int exp10_of(double v)
{
	char d[NDIG + 1];
	int e;
	digits_of(v, d, &e);
	return e;
}

/* "v ± u" with a common exponent x: "(m ± n)ex"; the digits are those of
 * the plain rounding, only the point moves. */
static char *pm_exp(char *buf, double v, double u, int dec)
{
	char a[WL_NUMFMT_BUF], b[WL_NUMFMT_BUF], kv[NDIG + 40], ku[NDIG + 40];
	double ur;
	int x;
	wl_numfmt_place(u, &ur);
	x = exp10_of(v != 0 && fabs(v) >= ur ? v : ur);
	if (dec + x > NDIG) /* an uncertainty far below the value's 15 digits */
		dec = NDIG - x;
	round_digits(v, dec, kv, sizeof kv);
	round_digits(u, dec, ku, sizeof ku);
	place_point(a, v < 0, kv, dec + x);
	place_point(b, 0, ku, dec + x);
	snprintf(buf, WL_NUMFMT_BUF, "(%s \xc2\xb1 %s)e%d", a, b, x);
	return buf;
}

char *wl_numfmt_pm(char *buf, double v, double u)
{
	char a[WL_NUMFMT_BUF], b[WL_NUMFMT_BUF];
	double ur;
	int dec;
	if (!isfinite(v)) {
		snprintf(buf, WL_NUMFMT_BUF, "n/a");
		return buf;
	}
	if (!isfinite(u) || !(u > 0))
		return wl_numfmt_sig(buf, v, 3);
	dec = wl_numfmt_place(u, &ur);
	if ((dec > 6 && fmax(fabs(v), ur) < 1e-3) || fmax(fabs(v), ur) >= 1e6)
		return pm_exp(buf, v, u, dec);
	snprintf(buf, WL_NUMFMT_BUF, "%s \xc2\xb1 %s", wl_numfmt_fixed(a, v, dec),
	         wl_numfmt_fixed(b, u, dec));
	return buf;
}

char *wl_numfmt_value(char *buf, double v, double u)
{
	char tmp[WL_NUMFMT_BUF], *p, *q;
	if (!isfinite(v) || !isfinite(u) || !(u > 0))
		return wl_numfmt_sig(buf, v, 3);
	wl_numfmt_pm(tmp, v, u);
	if (tmp[0] != '(') { /* the part before " ± " */
		*strstr(tmp, " \xc2\xb1 ") = '\0';
		snprintf(buf, WL_NUMFMT_BUF, "%s", tmp);
		return buf;
	}
	/* "(m ± n)ex" -> "mex" */
	p = strstr(tmp, " \xc2\xb1 ");
	q = strchr(tmp, ')');
	*p = '\0';
	snprintf(buf, WL_NUMFMT_BUF, "%s%s", tmp + 1, q + 1);
	return buf;
}

char *wl_numfmt_sig(char *buf, double v, int sig)
{
	char m[WL_NUMFMT_BUF], k[NDIG + 40];
	int e, dec;
	if (!isfinite(v)) {
		snprintf(buf, WL_NUMFMT_BUF, "n/a");
		return buf;
	}
	if (sig < 1)
		sig = 1;
	if (sig > NDIG)
		sig = NDIG;
	if (v == 0) {
		snprintf(buf, WL_NUMFMT_BUF, "0");
		return buf;
	}
	/* the exponent of v rounded to sig digits: 9.996 with 3 is 10.0 */
	e = exp10_of(v);
	round_digits(v, sig - 1 - e, k, sizeof k);
	if (strlen(k) > (size_t)sig) {
		e++;
		round_digits(v, sig - 1 - e, k, sizeof k);
	}
	if (fabs(v) >= 1e-4 && fabs(v) < 1e6) {
		dec = sig - 1 - e;
		return wl_numfmt_fixed(buf, v, dec > 0 ? dec : 0);
	}
	place_point(m, v < 0, k, sig - 1);
	snprintf(buf, WL_NUMFMT_BUF, "%se%d", m, e);
	return buf;
}

char *wl_numfmt_exact(char *buf, double v)
{
	if (!isfinite(v)) {
		snprintf(buf, WL_NUMFMT_BUF, "%s", isnan(v) ? "nan" : v > 0 ? "inf" : "-inf");
		return buf;
	}
	/* printf and strtod share the locale, so the round trip holds in any;
	 * a decimal comma is put right afterwards */
	for (int sig = 15; sig <= 17; sig++) {
		snprintf(buf, WL_NUMFMT_BUF, "%.*g", sig, v);
		if (strtod(buf, NULL) == v)
			break;
	}
	for (char *p = buf; *p; p++)
		if (*p == ',')
			*p = '.';
	return buf;
}
