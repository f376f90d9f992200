/*
 * plot.c: the plotting layer on cairo (see report.h).  A plot keeps copies
 * of its items and draws them on demand into a panel of a figure, so the
 * same plot can be written as SVG (vector) and PNG (raster).  Text goes
 * through cairo's own font API (fontconfig's sans face); SVG output is
 * produced by cairo's SVG surface, never by hand.
 */
#define _GNU_SOURCE
#include "report/report.h"

#include <dlfcn.h>

#include <cairo.h>
#include <cairo-svg.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/afile.h"
#include "core/angle.h"

typedef enum { IT_LINE, IT_SCATTER, IT_ERR, IT_POLY, IT_BAND, IT_CLINE, IT_TEXT } it_kind;

typedef struct {
	it_kind kind;
	wl_style st;
	size_t n;
	double *x, *y, *lo, *hi; /* lo holds the colour values of IT_CLINE */
	double a, b;             /* IT_BAND span; IT_CLINE colour range */
	int vertical;
	char *legend; /* or the text of IT_TEXT */
} item;

typedef struct {
	wl_scale scale;
	double c;
	int fixed;
	double lo, hi;
	char label[128];
} axis;

struct wl_plot {
	char title[256];
	axis ax, ay;
	int equal;
	char **cats;
	size_t ncats;
	item *items;
	size_t n, cap;
	int has_cbar;
	char cbar[128];
	double cmin, cmax;
};

/* margins of a panel, in points */
enum { M_LEFT = 64, M_RIGHT = 16, M_TOP = 26, M_BOTTOM = 42, M_CBAR = 74 };
static const char *FONT = "DejaVu Sans";

wl_plot *wl_plot_create(void)
{
	wl_plot *p = calloc(1, sizeof *p);
	if (p) {
		p->ax.c = p->ay.c = 1.0;
	}
	return p;
}

static void item_free(item *it)
{
	free(it->x);
	free(it->y);
	free(it->lo);
	free(it->hi);
	free(it->legend);
}

void wl_plot_destroy(wl_plot *p)
{
	size_t i;
	if (!p)
		return;
	for (i = 0; i < p->n; i++)
		item_free(&p->items[i]);
	for (i = 0; i < p->ncats; i++)
		free(p->cats[i]);
	free(p->cats);
	free(p->items);
	free(p);
}

static void copy_str(char *dst, size_t cap, const char *s)
{
	snprintf(dst, cap, "%s", s ? s : "");
}

void wl_plot_title(wl_plot *p, const char *t)
{
	copy_str(p->title, sizeof p->title, t);
}
void wl_plot_xlabel(wl_plot *p, const char *l)
{
	copy_str(p->ax.label, sizeof p->ax.label, l);
}
void wl_plot_ylabel(wl_plot *p, const char *l)
{
	copy_str(p->ay.label, sizeof p->ay.label, l);
}
void wl_plot_equal_aspect(wl_plot *p, int on)
{
	p->equal = on;
}

static void set_scale(axis *a, wl_scale s, double c)
{
	a->scale = s;
	a->c = c > 0 ? c : 1.0;
}
void wl_plot_xscale(wl_plot *p, wl_scale s, double c)
{
	set_scale(&p->ax, s, c);
}
void wl_plot_yscale(wl_plot *p, wl_scale s, double c)
{
	set_scale(&p->ay, s, c);
}

static void set_lim(axis *a, double lo, double hi)
{
	a->fixed = isfinite(lo) && isfinite(hi) && hi > lo;
	a->lo = lo;
	a->hi = hi;
}
void wl_plot_xlim(wl_plot *p, double lo, double hi)
{
	set_lim(&p->ax, lo, hi);
}
void wl_plot_ylim(wl_plot *p, double lo, double hi)
{
	set_lim(&p->ay, lo, hi);
}

wl_status wl_plot_xcategories(wl_plot *p, const char *const *names, size_t n, wl_err *err)
{
	size_t i;
	char **c = calloc(n ? n : 1, sizeof *c);
	if (!c)
		return wl_err_set(err, WL_ENOMEM, "out of memory for axis categories");
	for (i = 0; i < n; i++) {
		c[i] = strdup(names[i] ? names[i] : "");
		if (!c[i]) {
			while (i--)
				free(c[i]);
			free(c);
			return wl_err_set(err, WL_ENOMEM, "out of memory for axis categories");
		}
	}
	for (i = 0; i < p->ncats; i++)
		free(p->cats[i]);
	free(p->cats);
	p->cats = c;
	p->ncats = n;
	return WL_OK;
}

static double *dup_arr(const double *v, size_t n, int *fail)
{
	double *d;
	if (!v)
		return NULL;
	d = malloc((n ? n : 1) * sizeof *d);
	if (!d) {
		*fail = 1;
		return NULL;
	}
	if (n)
		memcpy(d, v, n * sizeof *d);
	return d;
}

static item *new_item(wl_plot *p, it_kind k, const wl_style *st, const char *legend, wl_err *err)
{
	item *it;
	if (p->n == p->cap) {
		size_t nc = p->cap ? 2 * p->cap : 8;
		item *ni = realloc(p->items, nc * sizeof *ni);
		if (!ni) {
			wl_err_set(err, WL_ENOMEM, "out of memory adding to a plot");
			return NULL;
		}
		p->items = ni;
		p->cap = nc;
	}
	it = &p->items[p->n];
	memset(it, 0, sizeof *it);
	it->kind = k;
	if (st)
		it->st = *st;
	if (it->st.alpha <= 0)
		it->st.alpha = 1;
	if (it->st.width_pt <= 0)
		it->st.width_pt = 1.5;
	if (it->st.mark_pt <= 0)
		it->st.mark_pt = 6;
	if (legend) {
		it->legend = strdup(legend);
		if (!it->legend) {
			wl_err_set(err, WL_ENOMEM, "out of memory adding to a plot");
			return NULL;
		}
	}
	return it;
}

static wl_status add_arrays(wl_plot *p, it_kind k, const double *x, const double *y, const double *lo,
                            const double *hi, size_t n, const wl_style *st, const char *legend, wl_err *err)
{
	int fail = 0;
	item *it = new_item(p, k, st, legend, err);
	if (!it)
		return WL_ENOMEM;
	it->n = n;
	it->x = dup_arr(x, n, &fail);
	it->y = dup_arr(y, n, &fail);
	it->lo = dup_arr(lo, n, &fail);
	it->hi = dup_arr(hi, n, &fail);
	if (fail) {
		item_free(it);
		return wl_err_set(err, WL_ENOMEM, "out of memory adding %zu points to a plot", n);
	}
	p->n++;
	return WL_OK;
}

wl_status wl_plot_add_line(wl_plot *p, const double *x, const double *y, size_t n, const wl_style *st,
                           const char *legend, wl_err *err)
{
	return add_arrays(p, IT_LINE, x, y, NULL, NULL, n, st, legend, err);
}

wl_status wl_plot_add_scatter(wl_plot *p, const double *x, const double *y, size_t n, const wl_style *st,
                              const char *legend, wl_err *err)
{
	wl_style s = st ? *st : (wl_style){0};
	if (s.mark == WL_MARK_NONE)
		s.mark = WL_MARK_CIRCLE;
	return add_arrays(p, IT_SCATTER, x, y, NULL, NULL, n, &s, legend, err);
}

wl_status wl_plot_add_errorbars(wl_plot *p, const double *x, const double *y, const double *lo,
                                const double *hi, size_t n, const wl_style *st, const char *legend,
                                wl_err *err)
{
	wl_style s = st ? *st : (wl_style){0};
	if (s.mark == WL_MARK_NONE)
		s.mark = WL_MARK_CIRCLE;
	return add_arrays(p, IT_ERR, x, y, lo, hi, n, &s, legend, err);
}

wl_status wl_plot_add_polygon(wl_plot *p, const double *x, const double *y, size_t n, const wl_style *st,
                              const char *legend, wl_err *err)
{
	return add_arrays(p, IT_POLY, x, y, NULL, NULL, n, st, legend, err);
}

wl_status wl_plot_add_band(wl_plot *p, int vertical, double a, double b, const wl_style *st,
                           const char *legend, wl_err *err)
{
	item *it = new_item(p, IT_BAND, st, legend, err);
	if (!it)
		return WL_ENOMEM;
	it->vertical = vertical;
	it->a = fmin(a, b);
	it->b = fmax(a, b);
	p->n++;
	return WL_OK;
}

wl_status wl_plot_add_cline(wl_plot *p, const double *x, const double *y, const double *c, size_t n,
                            double cmin, double cmax, double width_pt, const char *cbar_label, wl_err *err)
{
	wl_style st = {{0, 0, 0}, 1, width_pt, 0, WL_MARK_NONE, 0, 0};
	wl_status s = add_arrays(p, IT_CLINE, x, y, c, NULL, n, &st, NULL, err);
	if (s)
		return s;
	p->items[p->n - 1].a = cmin;
	p->items[p->n - 1].b = cmax > cmin ? cmax : cmin + 1;
	p->has_cbar = 1;
	p->cmin = cmin;
	p->cmax = cmax > cmin ? cmax : cmin + 1;
	copy_str(p->cbar, sizeof p->cbar, cbar_label);
	return WL_OK;
}

wl_status wl_plot_add_text(wl_plot *p, double x, double y, const char *text, const wl_style *st, wl_err *err)
{
	wl_status s = add_arrays(p, IT_TEXT, &x, &y, NULL, NULL, 1, st, text ? text : "", err);
	return s;
}

/* ---- layout ------------------------------------------------------------ */

static double fwd(const axis *a, double v)
{
	return a->scale == WL_SCALE_SYMLOG ? wl_symlog(v, a->c) : v;
}

static double inv(const axis *a, double s)
{
	return a->scale == WL_SCALE_SYMLOG ? wl_symlog_inv(s, a->c) : s;
}

static void grow(double *lo, double *hi, double v)
{
	if (!isfinite(v))
		return;
	if (v < *lo)
		*lo = v;
	if (v > *hi)
		*hi = v;
}

static void data_range(const wl_plot *p, int want_y, double *lo, double *hi)
{
	size_t i, j;
	*lo = INFINITY;
	*hi = -INFINITY;
	for (i = 0; i < p->n; i++) {
		const item *it = &p->items[i];
		if (it->kind == IT_BAND) {
			if (it->vertical == !want_y) {
				grow(lo, hi, it->a);
				grow(lo, hi, it->b);
			}
			continue;
		}
		for (j = 0; j < it->n; j++) {
			if (!want_y) {
				grow(lo, hi, it->x[j]);
				continue;
			}
			grow(lo, hi, it->y[j]);
			if (it->kind == IT_ERR) {
				grow(lo, hi, it->lo[j]);
				grow(lo, hi, it->hi[j]);
			}
		}
	}
}

/* Limits of an axis in transformed units. */
static void axis_limits(const wl_plot *p, const axis *a, int want_y, double *s0, double *s1)
{
	double lo, hi, m;
	if (a->fixed) {
		*s0 = fwd(a, a->lo);
		*s1 = fwd(a, a->hi);
		return;
	}
	data_range(p, want_y, &lo, &hi);
	if (!want_y && p->ncats) {
		grow(&lo, &hi, 0);
		grow(&lo, &hi, (double)p->ncats - 1);
	}
	if (!(lo <= hi)) {
		lo = 0;
		hi = 1;
	}
	lo = fwd(a, lo);
	hi = fwd(a, hi);
	if (hi - lo <= 1e-12 * fmax(1.0, fabs(hi))) {
		double d = fabs(lo) > 0 ? 0.1 * fabs(lo) : 0.5;
		lo -= d;
		hi += d;
	}
	m = 0.04 * (hi - lo);
	if (!want_y && p->ncats)
		m = fmax(m, 0.5);
	*s0 = lo - m;
	*s1 = hi + m;
}

typedef struct {
	double x0, y0, w, h; /* plot area in points */
	double sx0, sx1, sy0, sy1;
	double xt[WL_TICKS_MAX], yt[WL_TICKS_MAX];
	size_t nx, ny;
} frame;

static size_t axis_ticks(const axis *a, double s0, double s1, double len_pt, double *out)
{
	size_t want = (size_t)(len_pt / 55.0);
	double lo = inv(a, s0), hi = inv(a, s1);
	if (want < 3)
		want = 3;
	if (want > 10)
		want = 10;
	if (a->scale == WL_SCALE_SYMLOG)
		return wl_ticks_symlog(lo, hi, a->c, want + 1, out, WL_TICKS_MAX);
	return wl_ticks_linear(lo, hi, want, out, WL_TICKS_MAX);
}

static void make_frame(const wl_plot *p, double ox, double oy, double w, double h, frame *f)
{
	f->x0 = ox + M_LEFT;
	f->y0 = oy + M_TOP;
	f->w = w - M_LEFT - M_RIGHT - (p->has_cbar ? M_CBAR : 0);
	f->h = h - M_TOP - M_BOTTOM;
	if (f->w < 10)
		f->w = 10;
	if (f->h < 10)
		f->h = 10;
	axis_limits(p, &p->ax, 0, &f->sx0, &f->sx1);
	axis_limits(p, &p->ay, 1, &f->sy0, &f->sy1);
	if (p->equal && p->ax.scale == WL_SCALE_LINEAR && p->ay.scale == WL_SCALE_LINEAR) {
		double ux = (f->sx1 - f->sx0) / f->w, uy = (f->sy1 - f->sy0) / f->h;
		double u = fmax(ux, uy), cx = 0.5 * (f->sx0 + f->sx1), cy = 0.5 * (f->sy0 + f->sy1);
		f->sx0 = cx - 0.5 * u * f->w;
		f->sx1 = cx + 0.5 * u * f->w;
		f->sy0 = cy - 0.5 * u * f->h;
		f->sy1 = cy + 0.5 * u * f->h;
	}
	if (p->ncats) {
		size_t i;
		f->nx = 0;
		for (i = 0; i < p->ncats && i < WL_TICKS_MAX; i++)
			f->xt[f->nx++] = (double)i;
	} else {
		f->nx = axis_ticks(&p->ax, f->sx0, f->sx1, f->w, f->xt);
	}
	f->ny = axis_ticks(&p->ay, f->sy0, f->sy1, f->h, f->yt);
}

void wl_plot_layout(const wl_plot *p, double width_pt, double height_pt, double xlim[2], double ylim[2],
                    double *xticks, size_t *nx, double *yticks, size_t *ny)
{
	frame f;
	make_frame(p, 0, 0, width_pt, height_pt, &f);
	xlim[0] = inv(&p->ax, f.sx0);
	xlim[1] = inv(&p->ax, f.sx1);
	ylim[0] = inv(&p->ay, f.sy0);
	ylim[1] = inv(&p->ay, f.sy1);
	if (xticks)
		memcpy(xticks, f.xt, f.nx * sizeof *xticks);
	if (yticks)
		memcpy(yticks, f.yt, f.ny * sizeof *yticks);
	if (nx)
		*nx = f.nx;
	if (ny)
		*ny = f.ny;
}

static double px(const wl_plot *p, const frame *f, double v)
{
	return f->x0 + (fwd(&p->ax, v) - f->sx0) / (f->sx1 - f->sx0) * f->w;
}

static double py(const wl_plot *p, const frame *f, double v)
{
	return f->y0 + f->h - (fwd(&p->ay, v) - f->sy0) / (f->sy1 - f->sy0) * f->h;
}

/* ---- drawing ----------------------------------------------------------- */

static void set_colour(cairo_t *cr, const wl_style *st)
{
	cairo_set_source_rgba(cr, st->rgb[0], st->rgb[1], st->rgb[2], st->alpha);
}

static void set_line(cairo_t *cr, const wl_style *st)
{
	static const double dash[2] = {5.0, 3.0};
	cairo_set_line_width(cr, st->width_pt);
	cairo_set_dash(cr, dash, st->dashed ? 2 : 0, 0);
	cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
	cairo_set_line_cap(cr, CAIRO_LINE_CAP_ROUND);
}

static void draw_mark(cairo_t *cr, wl_mark m, double x, double y, double s, int fill)
{
	double r = s / 2;
	cairo_new_sub_path(cr);
	switch (m) {
	case WL_MARK_SQUARE:
		cairo_rectangle(cr, x - r, y - r, s, s);
		break;
	case WL_MARK_TRIANGLE:
		cairo_move_to(cr, x, y - r * 1.15);
		cairo_line_to(cr, x + r, y + r * 0.85);
		cairo_line_to(cr, x - r, y + r * 0.85);
		cairo_close_path(cr);
		break;
	case WL_MARK_DIAMOND:
		cairo_move_to(cr, x, y - r * 1.2);
		cairo_line_to(cr, x + r, y);
		cairo_line_to(cr, x, y + r * 1.2);
		cairo_line_to(cr, x - r, y);
		cairo_close_path(cr);
		break;
	case WL_MARK_CROSS:
		cairo_move_to(cr, x - r, y);
		cairo_line_to(cr, x + r, y);
		cairo_move_to(cr, x, y - r);
		cairo_line_to(cr, x, y + r);
		fill = 0;
		break;
	case WL_MARK_CIRCLE:
	default:
		cairo_arc(cr, x, y, r, 0, 2 * WL_PI);
		break;
	}
	if (fill)
		cairo_fill(cr);
	else
		cairo_stroke(cr);
}

static void text_at(cairo_t *cr, double x, double y, const char *s, double size, double ax, double ay)
{
	cairo_text_extents_t e;
	cairo_set_font_size(cr, size);
	cairo_text_extents(cr, s, &e);
	cairo_move_to(cr, x - ax * e.width - e.x_bearing, y - ay * e.height - e.y_bearing);
	cairo_show_text(cr, s);
}

static void draw_polyline(cairo_t *cr, const wl_plot *p, const frame *f, const item *it, int close)
{
	size_t j;
	int pen = 0;
	for (j = 0; j < it->n; j++) {
		if (!isfinite(it->x[j]) || !isfinite(it->y[j])) {
			pen = 0;
			continue;
		}
		if (pen)
			cairo_line_to(cr, px(p, f, it->x[j]), py(p, f, it->y[j]));
		else
			cairo_move_to(cr, px(p, f, it->x[j]), py(p, f, it->y[j]));
		pen = 1;
	}
	if (close && pen)
		cairo_close_path(cr);
}

/* Colour lines are drawn as runs of segments that share one of 64 colour
 * bins, so a long track makes a few dozen paths rather than one per step. */
static void draw_cline(cairo_t *cr, const wl_plot *p, const frame *f, const item *it)
{
	size_t j;
	int bin_cur = -1;
	cairo_set_line_width(cr, it->st.width_pt);
	cairo_set_dash(cr, NULL, 0, 0);
	cairo_set_line_cap(cr, CAIRO_LINE_CAP_ROUND);
	cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
	for (j = 1; j < it->n; j++) {
		double t, rgb[3];
		int bin;
		if (!isfinite(it->x[j]) || !isfinite(it->y[j]) || !isfinite(it->x[j - 1]) ||
		    !isfinite(it->y[j - 1])) {
			if (bin_cur >= 0)
				cairo_stroke(cr);
			bin_cur = -1;
			continue;
		}
		t = (0.5 * (it->lo[j] + it->lo[j - 1]) - it->a) / (it->b - it->a);
		bin = isfinite(t) ? (int)floor(fmin(fmax(t, 0), 1) * 63.999) : 64;
		if (bin != bin_cur) {
			if (bin_cur >= 0)
				cairo_stroke(cr);
			wl_cmap_viridis(bin == 64 ? NAN : (bin + 0.5) / 64.0, rgb);
			cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
			cairo_move_to(cr, px(p, f, it->x[j - 1]), py(p, f, it->y[j - 1]));
			bin_cur = bin;
		}
		cairo_line_to(cr, px(p, f, it->x[j]), py(p, f, it->y[j]));
	}
	if (bin_cur >= 0)
		cairo_stroke(cr);
}

static void draw_item(cairo_t *cr, const wl_plot *p, const frame *f, const item *it)
{
	size_t j;
	switch (it->kind) {
	case IT_BAND: {
		double a, b;
		set_colour(cr, &it->st);
		if (it->vertical) {
			a = isfinite(it->a) ? px(p, f, it->a) : f->x0 - 1;
			b = isfinite(it->b) ? px(p, f, it->b) : f->x0 + f->w + 1;
			cairo_rectangle(cr, a, f->y0, b - a, f->h);
		} else {
			a = isfinite(it->a) ? py(p, f, it->a) : f->y0 + f->h + 1;
			b = isfinite(it->b) ? py(p, f, it->b) : f->y0 - 1;
			cairo_rectangle(cr, f->x0, b, f->w, a - b);
		}
		cairo_fill(cr);
		break;
	}
	case IT_LINE:
		set_colour(cr, &it->st);
		set_line(cr, &it->st);
		draw_polyline(cr, p, f, it, 0);
		cairo_stroke(cr);
		break;
	case IT_POLY:
		set_colour(cr, &it->st);
		set_line(cr, &it->st);
		draw_polyline(cr, p, f, it, 1);
		if (it->st.fill)
			cairo_fill(cr);
		else
			cairo_stroke(cr);
		break;
	case IT_CLINE:
		draw_cline(cr, p, f, it);
		break;
	case IT_ERR:
	case IT_SCATTER:
		set_colour(cr, &it->st);
		set_line(cr, &it->st);
		cairo_set_dash(cr, NULL, 0, 0);
		for (j = 0; j < it->n; j++) {
			double x = px(p, f, it->x[j]);
			if (!isfinite(it->x[j]))
				continue;
			if (it->kind == IT_ERR && isfinite(it->lo[j]) && isfinite(it->hi[j])) {
				double yl = py(p, f, it->lo[j]), yh = py(p, f, it->hi[j]);
				cairo_set_line_width(cr, 1.0);
				cairo_move_to(cr, x, yl);
				cairo_line_to(cr, x, yh);
				cairo_move_to(cr, x - 3, yl);
				cairo_line_to(cr, x + 3, yl);
				cairo_move_to(cr, x - 3, yh);
				cairo_line_to(cr, x + 3, yh);
				cairo_stroke(cr);
				cairo_set_line_width(cr, it->st.width_pt);
			}
			if (isfinite(it->y[j]))
				draw_mark(cr, it->st.mark, x, py(p, f, it->y[j]), it->st.mark_pt,
				          it->st.fill || it->kind == IT_ERR);
		}
		break;
	case IT_TEXT:
		if (!isfinite(it->x[0]) || !isfinite(it->y[0]))
			break;
		set_colour(cr, &it->st);
		text_at(cr, px(p, f, it->x[0]) + 3, py(p, f, it->y[0]) - 3, it->legend, 8, 0, 1);
		break;
	}
}

static void draw_axes(cairo_t *cr, const wl_plot *p, const frame *f)
{
	size_t i;
	char buf[32];
	/* grid */
	cairo_set_line_width(cr, 0.5);
	cairo_set_dash(cr, NULL, 0, 0);
	cairo_set_source_rgb(cr, 0.88, 0.88, 0.88);
	for (i = 0; i < f->nx; i++) {
		double x = px(p, f, f->xt[i]);
		cairo_move_to(cr, x, f->y0);
		cairo_line_to(cr, x, f->y0 + f->h);
	}
	for (i = 0; i < f->ny; i++) {
		double y = py(p, f, f->yt[i]);
		cairo_move_to(cr, f->x0, y);
		cairo_line_to(cr, f->x0 + f->w, y);
	}
	cairo_stroke(cr);
	/* frame, ticks, labels */
	cairo_set_source_rgb(cr, 0, 0, 0);
	cairo_set_line_width(cr, 1.0);
	cairo_rectangle(cr, f->x0, f->y0, f->w, f->h);
	cairo_stroke(cr);
	cairo_select_font_face(cr, FONT, CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
	for (i = 0; i < f->nx; i++) {
		double x = px(p, f, f->xt[i]);
		const char *lab = p->ncats ? p->cats[(size_t)f->xt[i]] : wl_tick_label(buf, f->xt[i]);
		cairo_move_to(cr, x, f->y0 + f->h);
		cairo_line_to(cr, x, f->y0 + f->h + 4);
		cairo_stroke(cr);
		text_at(cr, x, f->y0 + f->h + 6, lab, 9, 0.5, 0);
	}
	for (i = 0; i < f->ny; i++) {
		double y = py(p, f, f->yt[i]);
		cairo_move_to(cr, f->x0 - 4, y);
		cairo_line_to(cr, f->x0, y);
		cairo_stroke(cr);
		text_at(cr, f->x0 - 6, y, wl_tick_label(buf, f->yt[i]), 9, 1, 0.5);
	}
	text_at(cr, f->x0 + f->w / 2, f->y0 + f->h + 22, p->ax.label, 10, 0.5, 0);
	cairo_save(cr);
	cairo_translate(cr, f->x0 - 50, f->y0 + f->h / 2);
	cairo_rotate(cr, -WL_PI / 2);
	text_at(cr, 0, 0, p->ay.label, 10, 0.5, 0.5);
	cairo_restore(cr);
	cairo_select_font_face(cr, FONT, CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_BOLD);
	text_at(cr, f->x0 + f->w / 2, f->y0 - 8, p->title, 11, 0.5, 1);
	cairo_select_font_face(cr, FONT, CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
}

/* Data points of the plot inside the box (x, y, w, h), in page points. */
static size_t points_under(const wl_plot *p, const frame *f, double x, double y, double w, double h)
{
	size_t hits = 0;
	for (size_t i = 0; i < p->n; i++) {
		const item *it = &p->items[i];
		if (it->kind != IT_LINE && it->kind != IT_SCATTER && it->kind != IT_ERR &&
		    it->kind != IT_CLINE)
			continue;
		for (size_t k = 0; k < it->n; k++) {
			double u = px(p, f, it->x[k]), v = py(p, f, it->y[k]);
			if (u >= x && u <= x + w && v >= y && v <= y + h)
				hits++;
		}
	}
	return hits;
}

/* The legend goes in the corner of the plot area that hides the fewest data
 * points (top right first, on a tie). */
static void legend_corner(const wl_plot *p, const frame *f, double w, double h, double *x, double *y)
{
	double xs[2] = {f->x0 + f->w - w - 4, f->x0 + 4}, ys[2] = {f->y0 + 4, f->y0 + f->h - h - 4};
	size_t best = (size_t)-1;
	*x = xs[0];
	*y = ys[0];
	for (int j = 0; j < 2; j++)
		for (int i = 0; i < 2; i++) {
			size_t hits = points_under(p, f, xs[i], ys[j], w, h);
			if (hits < best) {
				best = hits;
				*x = xs[i];
				*y = ys[j];
			}
		}
}

static void draw_legend(cairo_t *cr, const wl_plot *p, const frame *f)
{
	size_t i, n = 0;
	double wmax = 0, x, y, row = 13;
	cairo_text_extents_t e;
	cairo_set_font_size(cr, 8.5);
	for (i = 0; i < p->n; i++) {
		if (p->items[i].legend && p->items[i].kind != IT_TEXT) {
			cairo_text_extents(cr, p->items[i].legend, &e);
			wmax = fmax(wmax, e.x_advance);
			n++;
		}
	}
	if (!n)
		return;
	legend_corner(p, f, wmax + 30, row * (double)n + 6, &x, &y);
	cairo_set_source_rgba(cr, 1, 1, 1, 0.85);
	cairo_rectangle(cr, x, y, wmax + 30, row * (double)n + 6);
	cairo_fill_preserve(cr);
	cairo_set_source_rgb(cr, 0.6, 0.6, 0.6);
	cairo_set_line_width(cr, 0.5);
	cairo_stroke(cr);
	y += 3;
	for (i = 0; i < p->n; i++) {
		const item *it = &p->items[i];
		double cy = y + row / 2;
		if (!it->legend || it->kind == IT_TEXT)
			continue;
		set_colour(cr, &it->st);
		set_line(cr, &it->st);
		if (it->kind == IT_BAND || (it->kind == IT_POLY && it->st.fill)) {
			cairo_rectangle(cr, x + 4, cy - 4, 16, 8);
			cairo_fill(cr);
		} else if (it->kind == IT_SCATTER || it->kind == IT_ERR) {
			cairo_set_dash(cr, NULL, 0, 0);
			draw_mark(cr, it->st.mark, x + 12, cy, fmin(it->st.mark_pt, 8),
			          it->st.fill || it->kind == IT_ERR);
		} else {
			cairo_move_to(cr, x + 4, cy);
			cairo_line_to(cr, x + 20, cy);
			cairo_stroke(cr);
		}
		cairo_set_source_rgb(cr, 0, 0, 0);
		text_at(cr, x + 24, cy, it->legend, 8.5, 0, 0.5);
		y += row;
	}
}

static void draw_cbar(cairo_t *cr, const wl_plot *p, const frame *f)
{
	double x = f->x0 + f->w + 14, w = 12, ticks[WL_TICKS_MAX];
	size_t i, n;
	char buf[32];
	cairo_pattern_t *g = cairo_pattern_create_linear(0, f->y0 + f->h, 0, f->y0);
	for (i = 0; i <= 20; i++) {
		double rgb[3];
		wl_cmap_viridis(i / 20.0, rgb);
		cairo_pattern_add_color_stop_rgb(g, i / 20.0, rgb[0], rgb[1], rgb[2]);
	}
	cairo_rectangle(cr, x, f->y0, w, f->h);
	cairo_set_source(cr, g);
	cairo_fill(cr);
	cairo_pattern_destroy(g);
	cairo_set_source_rgb(cr, 0, 0, 0);
	cairo_set_line_width(cr, 0.8);
	cairo_rectangle(cr, x, f->y0, w, f->h);
	cairo_stroke(cr);
	n = wl_ticks_linear(p->cmin, p->cmax, 6, ticks, WL_TICKS_MAX);
	for (i = 0; i < n; i++) {
		double y = f->y0 + f->h - (ticks[i] - p->cmin) / (p->cmax - p->cmin) * f->h;
		cairo_move_to(cr, x + w, y);
		cairo_line_to(cr, x + w + 3, y);
		cairo_stroke(cr);
		text_at(cr, x + w + 5, y, wl_tick_label(buf, ticks[i]), 8.5, 0, 0.5);
	}
	cairo_save(cr);
	cairo_translate(cr, x + w + 46, f->y0 + f->h / 2);
	cairo_rotate(cr, -WL_PI / 2);
	text_at(cr, 0, 0, p->cbar, 9.5, 0.5, 0.5);
	cairo_restore(cr);
}

static void draw_panel(cairo_t *cr, const wl_plot *p, double ox, double oy, double w, double h)
{
	frame f;
	size_t i;
	make_frame(p, ox, oy, w, h, &f);
	cairo_save(cr);
	cairo_rectangle(cr, f.x0, f.y0, f.w, f.h);
	cairo_clip(cr);
	for (i = 0; i < p->n; i++)
		draw_item(cr, p, &f, &p->items[i]);
	cairo_restore(cr);
	draw_axes(cr, p, &f);
	draw_legend(cr, p, &f);
	if (p->has_cbar)
		draw_cbar(cr, p, &f);
}

static cairo_status_t write_fp(void *closure, const unsigned char *data, unsigned int len)
{
	return fwrite(data, 1, len, (FILE *)closure) == len ? CAIRO_STATUS_SUCCESS : CAIRO_STATUS_WRITE_ERROR;
}

static int ends_with(const char *s, const char *suf)
{
	size_t a = strlen(s), b = strlen(suf);
	return a >= b && strcmp(s + a - b, suf) == 0;
}

wl_status wl_plot_save(wl_plot *const *panels, size_t n, double width_pt, double height_pt, const char *path,
                       wl_err *err)
{
	int svg = ends_with(path, ".svg"), png = ends_with(path, ".png");
	wl_afile *af = NULL;
	cairo_surface_t *sf = NULL;
	cairo_t *cr = NULL;
	cairo_status_t cs;
	wl_status st;
	size_t i;

	if (!svg && !png)
		return wl_err_set(err, WL_EINVAL,
		                  "cannot tell the image format of '%s': name it .svg or .png", path);
	if (n == 0 || !(width_pt > 0) || !(height_pt > 0))
		return wl_err_set(err, WL_EINVAL, "nothing to draw into '%s'", path);
	st = wl_afile_open(path, &af, err);
	if (st)
		return st;
	if (svg)
		sf = cairo_svg_surface_create_for_stream(write_fp, wl_afile_fp(af), width_pt, height_pt);
	else
		sf = cairo_image_surface_create(CAIRO_FORMAT_RGB24, (int)ceil(width_pt),
		                                (int)ceil(height_pt));
	cr = cairo_create(sf);
	cairo_set_source_rgb(cr, 1, 1, 1);
	cairo_paint(cr);
	for (i = 0; i < n; i++)
		draw_panel(cr, panels[i], 0, height_pt * (double)i / (double)n, width_pt,
		           height_pt / (double)n);
	cs = cairo_status(cr);
	cairo_destroy(cr);
	if (cs == CAIRO_STATUS_SUCCESS && png)
		cs = cairo_surface_write_to_png_stream(sf, write_fp, wl_afile_fp(af));
	cairo_surface_finish(sf);
	if (cs == CAIRO_STATUS_SUCCESS)
		cs = cairo_surface_status(sf);
	cairo_surface_destroy(sf);
	if (cs != CAIRO_STATUS_SUCCESS) {
		wl_afile_abort(af);
		return wl_err_set(err, cs == CAIRO_STATUS_NO_MEMORY ? WL_ENOMEM : WL_EIO,
		                  "cannot draw '%s': %s: check free disk space", path,
		                  cairo_status_to_string(cs));
	}
	return wl_afile_commit(af, err);
}

/* fontconfig comes in through cairo; its FcFini is looked up at run time so
 * that the library need not link fontconfig itself. */
void wl_report_release_caches(void)
{
	void (*fc_fini)(void);
	void *sym;
	cairo_debug_reset_static_data();
	sym = dlsym(RTLD_DEFAULT, "FcFini");
	memcpy(&fc_fini, &sym, sizeof fc_fini);
	if (fc_fini)
		fc_fini();
}
