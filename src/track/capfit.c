/*
 * capfit.c: holding a colour cap partly washed out by glare (track.h).
 *
 * Glare on water adds light of the lamp's colour (white) to every channel
 * until they clip: a cap of colour c under glare g shows min(c + g, 255) in
 * each channel, loses saturation and falls out of its HSV range, so the
 * thresholded blob shrinks toward the part still clear and its centroid
 * moves away from the glare.  Here each pixel near the cap is classified:
 *
 *   cap      inside the cap's HSV range;
 *   washed   the cap's colour plus glare: p = min(c + g, 255) per channel
 *            for one g > 0 (within a tolerance), c the cap's mean colour
 *            measured on clear frames;
 *   unknown  all channels clipped, or so little colour left that a white
 *            surface under glare would look the same;
 *   other    anything else (floor, robot body, another colour);
 *
 * and the disc of the cap's known radius is placed where it covers the
 * most cap and washed pixels and the fewest others (unknown ones count
 * neither way), with every cap or washed pixel left outside it counting
 * against.  The score is the fraction of the disc seen as cap or washed.
 */
#include "track/track.h"

#include <math.h>
#include <string.h>

#define WASH_TOL 28.0      /* grey levels: how far a channel may stray from c + g */
#define WASH_MIN_G 12.0    /* less added light than this is not glare */
#define WASH_MIN_CHROMA 40 /* a washed pixel keeps this much between its channels */
#define CLIP 250           /* a channel at or above this is clipped */
#define STEP 0.25          /* px: grid of the centre search */
#define MAX_BOX 160        /* px: the classified box's side at most */

enum { PX_OTHER = 0, PX_CAP = 1, PX_WASHED = 2, PX_UNKNOWN = 3 };

static int classify(const uint8_t *p, const wl_hsv_range *r, const double c[3])
{
	int h, s, v, nclip = 0, nfree = 0;
	double g = 0;
	wl_rgb_to_hsv(p[0], p[1], p[2], &h, &s, &v);
	if (wl_hsv_in(r, h, s, v))
		return PX_CAP;
	for (int k = 0; k < 3; k++) {
		if (p[k] >= CLIP) {
			nclip++;
		} else {
			g += p[k] - c[k];
			nfree++;
		}
	}
	if (nclip == 3)
		return PX_UNKNOWN;
	g /= nfree;
	if (g < WASH_MIN_G)
		return PX_OTHER;
	for (int k = 0; k < 3; k++) {
		if (p[k] >= CLIP) {
			if (c[k] + g < CLIP - WASH_TOL)
				return PX_OTHER; /* clipped where c + g would not be */
		} else if (fabs(p[k] - c[k] - g) > WASH_TOL) {
			return PX_OTHER;
		}
	}
	/* so much light that little colour is left: a white surface under
	 * glare looks the same */
	{
		int mx = p[0] > p[1] ? (p[0] > p[2] ? p[0] : p[2]) : (p[1] > p[2] ? p[1] : p[2]);
		int mn = p[0] < p[1] ? (p[0] < p[2] ? p[0] : p[2]) : (p[1] < p[2] ? p[1] : p[2]);
		if (mx - mn < WASH_MIN_CHROMA)
			return PX_UNKNOWN;
	}
	return PX_WASHED;
}

/* The pixels within r of (cu, cv), inclusive box (x0, y0, x1, y1), cut to area. */
static void box_around(const int area[4], double cu, double cv, double r, int b[4])
{
	b[0] = (int)floor(cu - r);
	b[1] = (int)floor(cv - r);
	b[2] = (int)ceil(cu + r);
	b[3] = (int)ceil(cv + r);
	if (b[0] < area[0])
		b[0] = area[0];
	if (b[1] < area[1])
		b[1] = area[1];
	if (b[2] > area[0] + area[2] - 1)
		b[2] = area[0] + area[2] - 1;
	if (b[3] > area[1] + area[3] - 1)
		b[3] = area[1] + area[3] - 1;
}

int wl_cap_colour(const uint8_t *rgb, int stride, const int area[4], const wl_hsv_range *r, double cu,
                  double cv, double radius_px, double out[3])
{
	double s[3] = {0, 0, 0}, n = 0;
	int b[4];
	box_around(area, cu, cv, radius_px, b);
	for (int y = b[1]; y <= b[3]; y++)
		for (int x = b[0]; x <= b[2]; x++) {
			const uint8_t *p = rgb + (size_t)y * stride + 3 * (size_t)x;
			int h, sa, v;
			if ((x - cu) * (x - cu) + (y - cv) * (y - cv) > radius_px * radius_px)
				continue;
			wl_rgb_to_hsv(p[0], p[1], p[2], &h, &sa, &v);
			if (!wl_hsv_in(r, h, sa, v))
				continue;
			for (int k = 0; k < 3; k++)
				s[k] += p[k];
			n++;
		}
	if (n < 3)
		return 0;
	for (int k = 0; k < 3; k++)
		out[k] = s[k] / n;
	return 1;
}

int wl_cap_fit(const uint8_t *rgb, int stride, const int area[4], const wl_hsv_range *r,
               const double cap_rgb[3], double radius_px, double cu0, double cv0, double search_px,
               wl_capfit *out)
{
	double reach = radius_px + search_px + 2, best = -1e30, su = 0, sv = 0, nbest = 0,
	       r2 = radius_px * radius_px;
	int bx[4], x0, y0, x1, y1, bw, bh, ns;
	memset(out, 0, sizeof *out);
	box_around(area, cu0, cv0, reach, bx);
	x0 = bx[0];
	y0 = bx[1];
	x1 = bx[2];
	y1 = bx[3];
	bw = x1 - x0 + 1;
	bh = y1 - y0 + 1;
	if (bw < 3 || bh < 3 || bw > MAX_BOX || bh > MAX_BOX || !(radius_px >= 1.5))
		return 0;
	{
		unsigned char box[MAX_BOX * MAX_BOX];
		for (int y = 0; y < bh; y++)
			for (int x = 0; x < bw; x++)
				box[y * bw + x] = (unsigned char)classify(
				        rgb + (size_t)(y0 + y) * stride + 3 * (size_t)(x0 + x), r, cap_rgb);
		ns = (int)floor(search_px / STEP);
		/* the centres that score best; their mean is the estimate */
		for (int j = -ns; j <= ns; j++)
			for (int i = -ns; i <= ns; i++) {
				double cu = cu0 + i * STEP, cv = cv0 + j * STEP, sc = 0;
				for (int y = 0; y < bh; y++)
					for (int x = 0; x < bw; x++) {
						int c = box[y * bw + x];
						double du = x0 + x - cu, dv = y0 + y - cv;
						int in = du * du + dv * dv <= r2;
						if (c == PX_CAP || c == PX_WASHED)
							sc += in ? 1 : -1;
						else if (c == PX_OTHER && in)
							sc -= 1;
					}
				if (sc > best + 1e-9) {
					best = sc;
					su = cu;
					sv = cv;
					nbest = 1;
				} else if (sc > best - 1e-9) {
					su += cu;
					sv += cv;
					nbest++;
				}
			}
		out->cu = su / nbest;
		out->cv = sv / nbest;
		/* what the disc holds there */
		{
			double ncap = 0, nwash = 0, nother = 0, nunk = 0, nall = 0;
			for (int y = 0; y < bh; y++)
				for (int x = 0; x < bw; x++) {
					double du = x0 + x - out->cu, dv = y0 + y - out->cv;
					int c = box[y * bw + x];
					if (du * du + dv * dv > r2)
						continue;
					nall++;
					ncap += c == PX_CAP;
					nwash += c == PX_WASHED;
					nother += c == PX_OTHER;
					nunk += c == PX_UNKNOWN;
				}
			if (nall < 1)
				return 0;
			out->cap_frac = ncap / nall;
			out->washed_frac = nwash / nall;
			out->other_frac = nother / nall;
			out->unknown_frac = nunk / nall;
			out->score = (ncap + nwash) / nall;
		}
	}
	return 1;
}
