/*
 * blob.c: the colour back end of the tracker (track.h): OpenCV-compatible
 * 8-bit HSV, thresholding inside a search window, 8-connected components
 * (two-pass labelling with union-find), blob moments; and the HSV
 * statistics behind `wakeline colours`.
 *
 * HSV as OpenCV's cvtColor(COLOR_RGB2HSV) defines it for 8-bit images:
 * V = max, S = 255 (V - min) / V, H = hue in degrees / 2 (0-179).
 */
#include "track/track.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/angle.h"

void wl_rgb_to_hsv(int r, int g, int b, int *h, int *s, int *v)
{
	int mx = r > g ? (r > b ? r : b) : (g > b ? g : b);
	int mn = r < g ? (r < b ? r : b) : (g < b ? g : b);
	int d = mx - mn;
	double hh;
	*v = mx;
	*s = mx == 0 ? 0 : (int)lrint(255.0 * d / mx);
	if (d == 0) {
		*h = 0;
		return;
	}
	if (mx == r)
		hh = 60.0 * (g - b) / d;
	else if (mx == g)
		hh = 120.0 + 60.0 * (b - r) / d;
	else
		hh = 240.0 + 60.0 * (r - g) / d;
	if (hh < 0)
		hh += 360.0;
	*h = (int)lrint(hh / 2.0);
	if (*h >= 180)
		*h -= 180;
}

int wl_hsv_in(const wl_hsv_range *r, int h, int s, int v)
{
	int hue_ok;
	if (s < r->lo[1] || s > r->hi[1] || v < r->lo[2] || v > r->hi[2])
		return 0;
	if (r->lo[0] <= r->hi[0])
		hue_ok = h >= r->lo[0] && h <= r->hi[0];
	else /* wraps through 0 (red) */
		hue_ok = h >= r->lo[0] || h <= r->hi[0];
	return hue_ok;
}

struct wl_blobber {
	int *label;
	int *parent;
	size_t cap_px, cap_lab;
	/* per-label moments */
	double *m0, *mu, *mv;
	int *bb;
};

wl_status wl_blobber_create(wl_blobber **out, wl_err *err)
{
	*out = calloc(1, sizeof **out);
	return *out ? WL_OK : wl_err_set(err, WL_ENOMEM, "out of memory creating the blob finder");
}

void wl_blobber_destroy(wl_blobber *b)
{
	if (!b)
		return;
	free(b->label);
	free(b->parent);
	free(b->m0);
	free(b->mu);
	free(b->mv);
	free(b->bb);
	free(b);
}

static int grow(wl_blobber *b, size_t npx)
{
	/* buffers grow to the largest window seen and are then reused: memory
	 * stays flat over a clip */
	if (npx > b->cap_px) {
		int *l = realloc(b->label, npx * sizeof *l);
		if (!l)
			return 0;
		b->label = l;
		b->cap_px = npx;
	}
	if (npx / 2 + 2 > b->cap_lab) {
		size_t n = npx / 2 + 2;
		int *p = realloc(b->parent, n * sizeof *p);
		double *m0, *mu, *mv;
		int *bb;
		if (!p)
			return 0;
		b->parent = p;
		m0 = realloc(b->m0, n * sizeof *m0);
		if (!m0)
			return 0;
		b->m0 = m0;
		mu = realloc(b->mu, n * sizeof *mu);
		if (!mu)
			return 0;
		b->mu = mu;
		mv = realloc(b->mv, n * sizeof *mv);
		if (!mv)
			return 0;
		b->mv = mv;
		bb = realloc(b->bb, 4 * n * sizeof *bb);
		if (!bb)
			return 0;
		b->bb = bb;
		b->cap_lab = n;
	}
	return 1;
}

static int find_root(int *parent, int x)
{
	while (parent[x] != x) {
		parent[x] = parent[parent[x]];
		x = parent[x];
	}
	return x;
}

static void unite(int *parent, int a, int b)
{
	a = find_root(parent, a);
	b = find_root(parent, b);
	if (a < b)
		parent[b] = a;
	else if (b < a)
		parent[a] = b;
}

int wl_blobber_find(wl_blobber *b, const uint8_t *rgb, int stride, int x0, int y0, int w, int h,
                    const wl_hsv_range *r, int min_px, int max_px, wl_blob *out, int max)
{
	int nl = 1, n = 0;
	if (w <= 0 || h <= 0)
		return 0;
	if (!grow(b, (size_t)w * h))
		return -1;
	b->parent[0] = 0;
	/* first pass: provisional labels, equivalences through union-find */
	for (int y = 0; y < h; y++) {
		const uint8_t *row = rgb + (size_t)(y0 + y) * stride + 3 * (size_t)x0;
		int *lab = b->label + (size_t)y * w;
		const int *up = y > 0 ? lab - w : NULL;
		for (int x = 0; x < w; x++) {
			int hh, ss, vv, l = 0;
			wl_rgb_to_hsv(row[3 * x], row[3 * x + 1], row[3 * x + 2], &hh, &ss, &vv);
			if (!wl_hsv_in(r, hh, ss, vv)) {
				lab[x] = 0;
				continue;
			}
			/* neighbours already visited: W, NW, N, NE */
			int nb[4] = {x > 0 ? lab[x - 1] : 0, up && x > 0 ? up[x - 1] : 0, up ? up[x] : 0,
			             up && x + 1 < w ? up[x + 1] : 0};
			for (int k = 0; k < 4; k++) {
				if (!nb[k])
					continue;
				if (!l)
					l = nb[k];
				else if (nb[k] != l)
					unite(b->parent, l, nb[k]);
			}
			if (!l) {
				if ((size_t)nl >= b->cap_lab)
					return -1; /* cannot happen: at most w*h/2+1 labels 8-connected */
				l = nl;
				b->parent[nl++] = l;
			}
			lab[x] = l;
		}
	}
	for (int l = 1; l < nl; l++) {
		b->m0[l] = b->mu[l] = b->mv[l] = 0;
		b->bb[4 * l] = b->bb[4 * l + 1] = 1 << 30;
		b->bb[4 * l + 2] = b->bb[4 * l + 3] = -1;
	}
	/* second pass: moments per root */
	for (int y = 0; y < h; y++) {
		const int *lab = b->label + (size_t)y * w;
		for (int x = 0; x < w; x++) {
			int l;
			if (!lab[x])
				continue;
			l = find_root(b->parent, lab[x]);
			b->m0[l] += 1;
			b->mu[l] += x;
			b->mv[l] += y;
			if (x < b->bb[4 * l])
				b->bb[4 * l] = x;
			if (y < b->bb[4 * l + 1])
				b->bb[4 * l + 1] = y;
			if (x > b->bb[4 * l + 2])
				b->bb[4 * l + 2] = x;
			if (y > b->bb[4 * l + 3])
				b->bb[4 * l + 3] = y;
		}
	}
	for (int l = 1; l < nl && n < max; l++) {
		wl_blob *o;
		double bw, bh;
		if (b->parent[l] != l || b->m0[l] < min_px || b->m0[l] > max_px)
			continue;
		o = &out[n++];
		o->area_px = b->m0[l];
		o->cu = x0 + b->mu[l] / b->m0[l];
		o->cv = y0 + b->mv[l] / b->m0[l];
		o->bx0 = x0 + b->bb[4 * l];
		o->by0 = y0 + b->bb[4 * l + 1];
		o->bx1 = x0 + b->bb[4 * l + 2];
		o->by1 = y0 + b->bb[4 * l + 3];
		bw = o->bx1 - o->bx0 + 1;
		bh = o->by1 - o->by0 + 1;
		o->fill = o->area_px / (bw * bh);
	}
	return n;
}

static int cmp_int(const void *a, const void *b)
{
	int x = *(const int *)a, y = *(const int *)b;
	return (x > y) - (x < y);
}

static int pct(const int *sorted, long n, double p)
{
	long i = (long)floor(p * (double)(n - 1) + 0.5);
	return sorted[i < 0 ? 0 : i >= n ? n - 1 : i];
}

void wl_hsv_region_stats(const uint8_t *rgb, int stride, int x0, int y0, int w, int h, const uint8_t *mask,
                         wl_hsv_stats *st)
{
	long n = 0, cap = (long)w * h;
	int *ch[3];
	double sx = 0, sy = 0;
	memset(st, 0, sizeof *st);
	ch[0] = malloc((size_t)(cap > 0 ? cap : 1) * 3 * sizeof(int));
	if (!ch[0])
		return;
	ch[1] = ch[0] + cap;
	ch[2] = ch[1] + cap;
	for (int y = 0; y < h; y++)
		for (int x = 0; x < w; x++) {
			const uint8_t *p = rgb + (size_t)(y0 + y) * stride + 3 * (size_t)(x0 + x);
			int hh, ss, vv;
			if (mask && !mask[(size_t)y * w + x])
				continue;
			wl_rgb_to_hsv(p[0], p[1], p[2], &hh, &ss, &vv);
			ch[0][n] = hh;
			ch[1][n] = ss;
			ch[2][n] = vv;
			sx += cos(hh * WL_PI / 90.0);
			sy += sin(hh * WL_PI / 90.0);
			st->mean[1] += ss;
			st->mean[2] += vv;
			n++;
		}
	st->n = n;
	if (n > 0) {
		double hm = atan2(sy, sx) * 90.0 / WL_PI;
		if (hm < 0)
			hm += 180.0;
		st->mean[0] = hm;
		st->mean[1] /= n;
		st->mean[2] /= n;
		/* hue percentiles on the circle: unwrap around the mean first */
		for (long i = 0; i < n; i++) {
			int d = ch[0][i] - (int)lrint(hm);
			if (d > 90)
				ch[0][i] -= 180;
			else if (d < -90)
				ch[0][i] += 180;
		}
		for (int c = 0; c < 3; c++) {
			qsort(ch[c], (size_t)n, sizeof(int), cmp_int);
			st->p5[c] = pct(ch[c], n, 0.05);
			st->p50[c] = pct(ch[c], n, 0.50);
			st->p95[c] = pct(ch[c], n, 0.95);
		}
		for (int k = 0; k < 3; k++) {
			int *p = k == 0 ? &st->p5[0] : k == 1 ? &st->p50[0] : &st->p95[0];
			*p = ((*p % 180) + 180) % 180;
		}
	}
	free(ch[0]);
}
