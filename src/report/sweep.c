/*
 * sweep.c: the plots over a sweep of clips: curvature with its 95 %
 * interval against a manifest column, grouped by another, with the band
 * where |radius| is under one body diameter shaded; and the signed radius on
 * a symmetric-log axis.  One point per headline run (the longest segment of
 * each robot in each clip), so that a clip counts once per robot.
 */
#define _POSIX_C_SOURCE 200809L
#include "report/report.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/csvio.h"
#include "formats/summary.h"

#define MAX_GROUPS 32
#define MAX_CATS 256

typedef struct {
	double x, k, klo, khi, r, rbd;
	size_t g;
	int straight;
} pt;

static int truthy(const char *s)
{
	return s && (strcmp(s, "true") == 0 || strcmp(s, "1") == 0 || strcmp(s, "yes") == 0);
}

static double cellnum(const wl_report_runs *t, size_t row, int col)
{
	double v;
	if (col < 0 || !wl_parse_double(t->rows[row].cells[col], &v))
		return NAN;
	return v;
}

static int cmp_double(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return (x > y) - (x < y);
}

static int cmp_str(const void *a, const void *b)
{
	return strcmp(*(const char *const *)a, *(const char *const *)b);
}

/* Body diameter from the runs: median of |radius_m| / radius_body_diameters. */
static double body_from_runs(const pt *p, size_t n)
{
	double *v = malloc((n ? n : 1) * sizeof *v), med = 0;
	size_t m = 0, i;
	if (!v)
		return 0;
	for (i = 0; i < n; i++)
		if (isfinite(p[i].r) && isfinite(p[i].rbd) && p[i].rbd != 0)
			v[m++] = fabs(p[i].r / p[i].rbd);
	if (m) {
		qsort(v, m, sizeof *v, cmp_double);
		med = m % 2 ? v[m / 2] : 0.5 * (v[m / 2 - 1] + v[m / 2]);
	}
	free(v);
	return med;
}

double wl_report_body_diameter(const wl_report_runs *t, const wl_report_sweep_opts *o)
{
	int cr = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_RADIUS));
	int crb = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_RADIUS_BODY));
	pt *p;
	size_t i, n = 0;
	double body;
	if (o && o->body_diameter_m > 0)
		return o->body_diameter_m;
	p = calloc(t->nrows ? t->nrows : 1, sizeof *p);
	if (!p)
		return 0;
	for (i = 0; i < t->nrows; i++) {
		p[n].r = cellnum(t, i, cr);
		p[n++].rbd = cellnum(t, i, crb);
	}
	body = body_from_runs(p, n);
	free(p);
	return body;
}

static size_t index_of(const char **list, size_t n, const char *s)
{
	size_t i;
	for (i = 0; i < n; i++)
		if (strcmp(list[i], s) == 0)
			return i;
	return n;
}

typedef struct {
	pt *p;
	size_t n;
	const char *groups[MAX_GROUPS];
	size_t ngroups;
	const char *cats[MAX_CATS];
	size_t ncats; /* 0: numeric x */
	double body;
	size_t nstraight;
} sweep;

/* A run whose verdict is reject: the method could not follow it, so it is
 * never drawn as a plain point (report.html lists it, struck through). */
static int rejected(const wl_report_runs *t, size_t i, int cv)
{
	return cv >= 0 && strcmp(t->rows[i].cells[cv], "reject") == 0;
}

static wl_status collect(const wl_report_runs *t, const wl_report_sweep_opts *o, sweep *sw, wl_err *err)
{
	int cx = wl_report_runs_col(t, o->x_col),
	    cg = o->group_col ? wl_report_runs_col(t, o->group_col) : -1;
	int ck = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_CURVATURE)),
	    clo = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_CURVATURE_LO));
	int chi = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_CURVATURE_HI)),
	    cr = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_RADIUS));
	int crb = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_RADIUS_BODY)),
	    ch = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_HEADLINE));
	int cs = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_STRAIGHT));
	int cv = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_VERDICT));
	size_t i, numeric = 1;

	if (cx < 0)
		return wl_err_set(err, WL_EINVAL,
		                  "no column '%s' in the manifest for the sweep's x axis: use one of the "
		                  "manifest's columns",
		                  o->x_col);
	if (o->group_col && cg < 0)
		return wl_err_set(
		        err, WL_EINVAL,
		        "no column '%s' in the manifest to group by: use one of the manifest's columns",
		        o->group_col);
	sw->p = calloc(t->nrows ? t->nrows : 1, sizeof *sw->p);
	if (!sw->p)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the sweep plot");
	for (i = 0; i < t->nrows; i++) {
		const wl_report_row *row = &t->rows[i];
		double dummy;
		if (strcmp(row->status, "ok") != 0 || (ch >= 0 && !truthy(row->cells[ch])) ||
		    rejected(t, i, cv))
			continue;
		if (!isfinite(cellnum(t, i, ck)))
			continue;
		if (!wl_parse_double(row->cells[cx], &dummy))
			numeric = 0;
	}
	for (i = 0; i < t->nrows; i++) {
		const wl_report_row *row = &t->rows[i];
		pt *q = &sw->p[sw->n];
		const char *g = cg >= 0 ? row->cells[cg] : "";
		if (strcmp(row->status, "ok") != 0 || (ch >= 0 && !truthy(row->cells[ch])) ||
		    rejected(t, i, cv))
			continue;
		q->k = cellnum(t, i, ck);
		if (!isfinite(q->k))
			continue;
		q->klo = cellnum(t, i, clo);
		q->khi = cellnum(t, i, chi);
		q->r = cellnum(t, i, cr);
		q->rbd = cellnum(t, i, crb);
		q->straight = cs >= 0 && truthy(row->cells[cs]);
		if (numeric) {
			q->x = cellnum(t, i, cx);
		} else {
			size_t c = index_of(sw->cats, sw->ncats, row->cells[cx]);
			if (c == sw->ncats && sw->ncats < MAX_CATS)
				sw->cats[sw->ncats++] = row->cells[cx];
			q->x = (double)c; /* re-numbered after sorting below */
		}
		q->g = index_of(sw->groups, sw->ngroups, g);
		if (q->g == sw->ngroups && sw->ngroups < MAX_GROUPS)
			sw->groups[sw->ngroups++] = g;
		if (q->g >= MAX_GROUPS)
			q->g = MAX_GROUPS - 1;
		sw->nstraight += q->straight || !isfinite(q->r);
		sw->n++;
	}
	if (!numeric) {
		/* categories in sorted order, so the plot does not depend on row order */
		const char *orig[MAX_CATS];
		memcpy(orig, sw->cats, sw->ncats * sizeof *orig);
		qsort(sw->cats, sw->ncats, sizeof *sw->cats, cmp_str);
		for (i = 0; i < sw->n; i++)
			sw->p[i].x = (double)index_of(sw->cats, sw->ncats, orig[(size_t)sw->p[i].x]);
	}
	sw->body = o->body_diameter_m > 0 ? o->body_diameter_m : body_from_runs(sw->p, sw->n);
	return WL_OK;
}

/* Offsets groups sideways so that their intervals do not hide each other. */
static double dodge(const sweep *sw, size_t g, double xspan)
{
	double step = sw->ncats ? 0.12 : 0.012 * xspan;
	return sw->ngroups > 1 ? step * ((double)g - 0.5 * (double)(sw->ngroups - 1)) : 0;
}

static wl_status add_groups(wl_plot *p, const sweep *sw, int radius, wl_err *err)
{
	double *x = malloc((sw->n + 1) * 4 * sizeof *x), xmin = INFINITY, xmax = -INFINITY;
	size_t g, i, m;
	wl_status s = WL_OK;
	if (!x)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the sweep plot");
	for (i = 0; i < sw->n; i++) {
		xmin = fmin(xmin, sw->p[i].x);
		xmax = fmax(xmax, sw->p[i].x);
	}
	for (g = 0; g < sw->ngroups && !s; g++) {
		double *y = x + sw->n + 1, *lo = y + sw->n + 1, *hi = lo + sw->n + 1;
		wl_style st = {{0, 0, 0}, 1, 1.2, 0, (wl_mark)(WL_MARK_CIRCLE + g % 3), 6, 1};
		char lab[160];
		wl_palette(g, st.rgb);
		if (st.mark == WL_MARK_CROSS)
			st.mark = WL_MARK_DIAMOND;
		for (i = 0, m = 0; i < sw->n; i++) {
			const pt *q = &sw->p[i];
			if (q->g != g)
				continue;
			if (radius && (q->straight || !isfinite(q->r)))
				continue;
			x[m] = q->x + dodge(sw, g, xmax - xmin);
			if (!radius) {
				y[m] = q->k;
				lo[m] = q->klo;
				hi[m] = q->khi;
			} else {
				y[m] = q->r;
				/* the radius interval is 1/curvature's when that does not reach 0 */
				if (isfinite(q->klo) && isfinite(q->khi) && q->klo * q->khi > 0) {
					lo[m] = 1.0 / q->khi;
					hi[m] = 1.0 / q->klo;
				} else {
					lo[m] = hi[m] = NAN;
				}
			}
			m++;
		}
		snprintf(lab, sizeof lab, "%s", sw->groups[g][0] ? sw->groups[g] : "(none)");
		if (m)
			s = wl_plot_add_errorbars(p, x, y, lo, hi, m, &st, sw->ngroups > 1 ? lab : NULL, err);
	}
	free(x);
	return s;
}

static wl_status save_both(wl_plot *p, const char *dir, const char *base, wl_err *err)
{
	char path[4200];
	wl_status s;
	snprintf(path, sizeof path, "%s/%s.svg", dir, base);
	if ((s = wl_plot_save(&p, 1, 640, 440, path, err)))
		return s;
	snprintf(path, sizeof path, "%s/%s.png", dir, base);
	return wl_plot_save(&p, 1, 640, 440, path, err);
}

wl_status wl_report_sweep_plots(const wl_report_runs *t, const wl_report_sweep_opts *o, const char *dir,
                                int *written, wl_err *err)
{
	sweep sw;
	wl_plot *pk = NULL, *pr = NULL;
	wl_style band = {{0.85, 0.33, 0.1}, 0.15, 0, 0, WL_MARK_NONE, 0, 0};
	char title[256], num[WL_NUMBUF];
	wl_status s;

	*written = 0;
	memset(&sw, 0, sizeof sw);
	if (!o || !o->x_col)
		return WL_OK;
	if ((s = collect(t, o, &sw, err)))
		goto out;
	if (sw.n == 0)
		goto out;
	pk = wl_plot_create();
	pr = wl_plot_create();
	if (!pk || !pr) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory for the sweep plot");
		goto out;
	}
	/* curvature */
	snprintf(title, sizeof title, "curvature against %s (headline runs, 95%% interval)", o->x_col);
	wl_plot_title(pk, title);
	wl_plot_xlabel(pk, o->x_col);
	wl_plot_ylabel(pk, "curvature (1/m), + counter-clockwise");
	if (sw.ncats && (s = wl_plot_xcategories(pk, sw.cats, sw.ncats, err)))
		goto out;
	if (sw.body > 0) {
		snprintf(title, sizeof title, "|radius| < 1 body diameter (%s m)", wl_fmt_g(num, sw.body, 3));
		if ((s = wl_plot_add_band(pk, 0, 1.0 / sw.body, INFINITY, &band, title, err)) ||
		    (s = wl_plot_add_band(pk, 0, -INFINITY, -1.0 / sw.body, &band, NULL, err)))
			goto out;
	}
	if ((s = add_groups(pk, &sw, 0, err)))
		goto out;
	{
		/* the band must not stretch the axis: limit it to the data with room */
		double kmax = 0;
		size_t i;
		for (i = 0; i < sw.n; i++) {
			kmax = fmax(kmax, fabs(sw.p[i].k));
			if (isfinite(sw.p[i].klo))
				kmax = fmax(kmax, fabs(sw.p[i].klo));
			if (isfinite(sw.p[i].khi))
				kmax = fmax(kmax, fabs(sw.p[i].khi));
		}
		if (sw.body > 0)
			kmax = fmax(kmax, 1.25 / sw.body);
		if (!(kmax > 0))
			kmax = 1;
		wl_plot_ylim(pk, -1.08 * kmax, 1.08 * kmax);
	}
	if ((s = save_both(pk, dir, "sweep_curvature", err)))
		goto out;
	/* signed radius, symmetric log */
	snprintf(title, sizeof title, "signed radius against %s (%zu straight not shown)", o->x_col,
	         sw.nstraight);
	wl_plot_title(pr, title);
	wl_plot_xlabel(pr, o->x_col);
	wl_plot_ylabel(pr, "radius (m), symmetric log");
	wl_plot_yscale(pr, WL_SCALE_SYMLOG, sw.body > 0 ? sw.body : 0.1);
	if (sw.ncats && (s = wl_plot_xcategories(pr, sw.cats, sw.ncats, err)))
		goto out;
	if (sw.body > 0) {
		snprintf(title, sizeof title, "|radius| < 1 body diameter (%s m)", wl_fmt_g(num, sw.body, 3));
		if ((s = wl_plot_add_band(pr, 0, -sw.body, sw.body, &band, title, err)))
			goto out;
	}
	if ((s = add_groups(pr, &sw, 1, err)) || (s = save_both(pr, dir, "sweep_radius", err)))
		goto out;
	*written = 1;
out:
	wl_plot_destroy(pk);
	wl_plot_destroy(pr);
	free(sw.p);
	return s;
}
