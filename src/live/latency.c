/*
 * latency.c: latency histograms for `wakeline live` (live.h): logarithmic
 * bins 1 % wide from 1 microsecond to 100 s, so that the median and the
 * 99th percentile of a run of any length come out to within 1 % from a
 * fixed 7 kB, without keeping the samples.
 */
#include "live/live.h"

#include <math.h>
#include <string.h>

#define LAT_MIN_S 1e-6
#define LAT_STEP 1.01 /* WL_LATENCY_BINS = ceil(log(1e8) / log(1.01)) */

void wl_latency_reset(wl_latency *h)
{
	memset(h, 0, sizeof *h);
}

void wl_latency_add(wl_latency *h, double s)
{
	long k;
	if (!(s >= 0) || !isfinite(s))
		return;
	k = s <= LAT_MIN_S ? 0 : (long)floor(log(s / LAT_MIN_S) / log(LAT_STEP));
	if (k >= WL_LATENCY_BINS)
		k = WL_LATENCY_BINS - 1;
	h->bin[k]++;
	h->n++;
	if (s > h->max_s)
		h->max_s = s;
}

double wl_latency_quantile(const wl_latency *h, double q)
{
	int64_t want, seen = 0;
	if (h->n == 0)
		return NAN;
	if (q < 0)
		q = 0;
	if (q > 1)
		q = 1;
	/* the smallest bin holding at least ceil(q n) samples (nearest rank) */
	want = (int64_t)ceil(q * (double)h->n);
	if (want < 1)
		want = 1;
	for (int k = 0; k < WL_LATENCY_BINS; k++) {
		seen += h->bin[k];
		if (seen >= want) {
			double mid = LAT_MIN_S * pow(LAT_STEP, k + 0.5);
			return mid < h->max_s ? mid : h->max_s;
		}
	}
	return h->max_s;
}
