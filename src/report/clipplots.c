/*
 * clipplots.c: the per-run plots of one clip's output folder: the path on
 * the tank floor coloured by time (path_m.svg/.png) and heading and yaw
 * rate over time with the left-out parts shaded (heading.svg/.png).
 * Inputs are the files of the clean and measure stages (clean.csv,
 * summary.json), read through their readers in src/formats/.
 *
 * clean.csv is read twice: once to count the rows of each robot, once to
 * keep every k-th row, so memory stays bounded whatever the clip length.
 */
#define _POSIX_C_SOURCE 200809L
#include "report/report.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/angle.h"
#include "formats/clean.h"
#include "formats/summary.h"

#define MAX_IDS 64
#define MAX_SPANS 512

typedef struct {
	double t0, t1;
} span;

typedef struct {
	char id[64];
	long count, stride, seen;
	size_t n;
	double *t, *x, *y, *hd, *yr;
	int *seg;
	double prev_h, off_h;
	int have_h;
	span spans[MAX_SPANS];
	size_t nspans;
	int in_span;
	double last_t;
} track;

typedef struct {
	const char *path;
	int pass;
	track *tr;
	size_t ntr;
	double tmin, tmax;
} reader;

static track *find_track(reader *r, const char *id, int create, wl_err *err, long line)
{
	size_t i;
	for (i = 0; i < r->ntr; i++)
		if (strcmp(r->tr[i].id, id) == 0)
			return &r->tr[i];
	if (!create)
		return NULL;
	if (r->ntr == MAX_IDS) {
		wl_err_set(err, WL_ELIMIT, "%s:%ld: more than %d robot ids: plot a clip with fewer robots",
		           r->path, line, MAX_IDS);
		return NULL;
	}
	memset(&r->tr[r->ntr], 0, sizeof r->tr[0]);
	snprintf(r->tr[r->ntr].id, sizeof r->tr[0].id, "%s", id);
	return &r->tr[r->ntr++];
}

static wl_status alloc_track(track *t, wl_err *err)
{
	size_t m = (size_t)(t->count / t->stride + 2);
	t->t = malloc(m * sizeof(double));
	t->x = malloc(m * sizeof(double));
	t->y = malloc(m * sizeof(double));
	t->hd = malloc(m * sizeof(double));
	t->yr = malloc(m * sizeof(double));
	t->seg = malloc(m * sizeof(int));
	if (!t->t || !t->x || !t->y || !t->hd || !t->yr || !t->seg)
		return wl_err_set(err, WL_ENOMEM, "out of memory for %zu plot points", m);
	return WL_OK;
}

static void track_free(track *t)
{
	free(t->t);
	free(t->x);
	free(t->y);
	free(t->hd);
	free(t->yr);
	free(t->seg);
}

static wl_status on_row(const wl_clean_row *row, void *ctx, wl_err *err)
{
	reader *r = ctx;
	track *tr;
	char id[64];
	double t = row->t_s, h = row->heading_rad;
	long seg = row->segment;
	snprintf(id, sizeof id, "%ld", row->id);
	tr = find_track(r, id, r->pass == 0, err, row->line);
	if (!tr)
		return r->pass == 0 ? err->code : WL_OK;
	if (r->pass == 0) {
		tr->count++;
		r->tmin = fmin(r->tmin, t);
		r->tmax = fmax(r->tmax, t);
		return WL_OK;
	}
	/* spans of rows left out of every segment, from every row */
	if (seg < 0 && !tr->in_span && tr->nspans < MAX_SPANS) {
		tr->spans[tr->nspans].t0 = t;
		tr->in_span = 1;
	} else if (seg >= 0 && tr->in_span) {
		tr->spans[tr->nspans++].t1 = t;
		tr->in_span = 0;
	}
	tr->last_t = t;
	/* heading unwrapped on every row, so that thinning cannot miss a wrap */
	if (isfinite(h)) {
		if (tr->have_h) {
			double d = h - tr->prev_h;
			if (d > WL_PI)
				tr->off_h -= 2 * WL_PI;
			else if (d < -WL_PI)
				tr->off_h += 2 * WL_PI;
		}
		tr->prev_h = h;
		tr->have_h = 1;
	}
	/* keep every stride-th row, and every row where the segment changes */
	if (tr->seen++ % tr->stride == 0 || (tr->n > 0 && tr->seg[tr->n - 1] != (int)seg)) {
		size_t m = (size_t)(tr->count / tr->stride + 2);
		if (tr->n >= m) /* segment changes past the budget: drop */
			return WL_OK;
		tr->t[tr->n] = t;
		tr->x[tr->n] = row->x_m;
		tr->y[tr->n] = row->y_m;
		tr->hd[tr->n] = isfinite(h) ? (h + tr->off_h) / WL_DEG : NAN;
		tr->yr[tr->n] = row->yaw_rate_radps / WL_DEG;
		tr->seg[tr->n] = (int)seg;
		tr->n++;
	}
	return WL_OK;
}

typedef struct {
	char id[64];
	double cx, cy, r;
} circle;

/* Fitted circles of the non-straight runs that give a centre. */
static wl_status read_circles(const char *path, circle *c, size_t cap, size_t *n, wl_err *err)
{
	wl_summary sum;
	wl_status s = wl_summary_read(path, &sum, err);
	*n = 0;
	for (size_t i = 0; !s && i < sum.nruns && *n < cap; i++) {
		const wl_summary_run *run = &sum.runs[i];
		if (run->m.straight || !isfinite(run->m.centre_x_m) || !isfinite(run->m.centre_y_m) ||
		    !isfinite(run->m.radius_m))
			continue;
		snprintf(c[*n].id, sizeof c[*n].id, "%ld", run->id);
		c[*n].cx = run->m.centre_x_m;
		c[*n].cy = run->m.centre_y_m;
		c[*n].r = fabs(run->m.radius_m);
		(*n)++;
	}
	wl_summary_release(&sum);
	return s;
}

static const wl_style GREY = {{0.55, 0.55, 0.55}, 1, 0.8, 0, WL_MARK_NONE, 0, 0};

static wl_status path_plot(const char *dir, const reader *r, const circle *cs, size_t nc,
                           const wl_report_scene *sc, wl_err *err)
{
	wl_plot *p = wl_plot_create();
	wl_status s = WL_OK;
	char path[4200];
	size_t i, j;
	int legend_done = 0;
	double *tmp = NULL;

	if (!p)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the path plot");
	wl_plot_title(p, "path on the tank floor");
	wl_plot_xlabel(p, "x (m)");
	wl_plot_ylabel(p, "y (m)");
	wl_plot_equal_aspect(p, 1);
	if (sc && sc->n_outline >= 2) {
		double *ox = malloc(sc->n_outline * 2 * sizeof *ox);
		wl_style st = {{0.2, 0.2, 0.2}, 1, 1.2, 0, WL_MARK_NONE, 0, 0};
		if (!ox) {
			s = wl_err_set(err, WL_ENOMEM, "out of memory for the tank outline");
			goto out;
		}
		for (i = 0; i < sc->n_outline; i++) {
			ox[i] = sc->outline_m[i][0];
			ox[sc->n_outline + i] = sc->outline_m[i][1];
		}
		s = wl_plot_add_polygon(p, ox, ox + sc->n_outline, sc->n_outline, &st, "tank outline", err);
		free(ox);
		if (s)
			goto out;
	}
	if (sc && sc->n_markers) {
		wl_style st = {{0.35, 0.35, 0.35}, 1, 1, 0, WL_MARK_SQUARE, 7, 1};
		for (i = 0; i < sc->n_markers && !s; i++) {
			s = wl_plot_add_scatter(p, &sc->markers_m[i][0], &sc->markers_m[i][1], 1, &st,
			                        i == 0 ? "floor markers" : NULL, err);
			if (!s && sc->marker_ids && sc->marker_ids[i])
				s = wl_plot_add_text(p, sc->markers_m[i][0], sc->markers_m[i][1],
				                     sc->marker_ids[i], &st, err);
		}
		if (s)
			goto out;
	}
	for (i = 0; i < r->ntr; i++) {
		const track *t = &r->tr[i];
		wl_style start = {{0.0, 0.62, 0.45}, 1, 1, 0, WL_MARK_TRIANGLE, 9, 1};
		wl_style end = {{0.84, 0.1, 0.1}, 1, 1, 0, WL_MARK_SQUARE, 8, 1};
		size_t first = t->n, last = t->n;
		free(tmp);
		tmp = malloc((t->n + 1) * 2 * sizeof *tmp);
		if (!tmp) {
			s = wl_err_set(err, WL_ENOMEM, "out of memory for the path plot");
			goto out;
		}
		/* the whole track thin and grey, the analysed rows coloured by time */
		if ((s = wl_plot_add_line(p, t->x, t->y, t->n, &GREY, i == 0 ? "left out of segments" : NULL,
		                          err)))
			goto out;
		for (j = 0; j < t->n; j++) {
			int in = t->seg[j] >= 0 && isfinite(t->x[j]) && isfinite(t->y[j]);
			tmp[j] = in ? t->x[j] : NAN;
			tmp[t->n + 1 + j] = in ? t->y[j] : NAN;
			if (in) {
				if (first == t->n)
					first = j;
				last = j;
			}
		}
		if ((s = wl_plot_add_cline(p, tmp, tmp + t->n + 1, t->t, t->n, r->tmin, r->tmax, 2.2,
		                           "time (s)", err)))
			goto out;
		if (first < t->n) {
			if ((s = wl_plot_add_scatter(p, &t->x[first], &t->y[first], 1, &start,
			                             legend_done ? NULL : "start", err)) ||
			    (s = wl_plot_add_scatter(p, &t->x[last], &t->y[last], 1, &end,
			                             legend_done ? NULL : "end", err)))
				goto out;
			if (r->ntr > 1 &&
			    (s = wl_plot_add_text(p, t->x[first], t->y[first], t->id, &start, err)))
				goto out;
			legend_done = 1;
		}
	}
	for (i = 0; i < nc; i++) {
		double cx[181], cy[181];
		wl_style cst = {{0.1, 0.1, 0.1}, 1, 1.0, 1, WL_MARK_NONE, 0, 0};
		wl_style mst = {{0.1, 0.1, 0.1}, 1, 1.4, 0, WL_MARK_CROSS, 10, 0};
		for (j = 0; j < 181; j++) {
			cx[j] = cs[i].cx + cs[i].r * cos(2 * WL_PI * (double)j / 180.0);
			cy[j] = cs[i].cy + cs[i].r * sin(2 * WL_PI * (double)j / 180.0);
		}
		if ((s = wl_plot_add_line(p, cx, cy, 181, &cst, i == 0 ? "fitted circle" : NULL, err)) ||
		    (s = wl_plot_add_scatter(p, &cs[i].cx, &cs[i].cy, 1, &mst,
		                             i == 0 ? "circle centre" : NULL, err)))
			goto out;
	}
	snprintf(path, sizeof path, "%s/path_m.svg", dir);
	if ((s = wl_plot_save(&p, 1, 640, 520, path, err)))
		goto out;
	snprintf(path, sizeof path, "%s/path_m.png", dir);
	s = wl_plot_save(&p, 1, 640, 520, path, err);
out:
	free(tmp);
	wl_plot_destroy(p);
	return s;
}

static wl_status heading_plot(const char *dir, const reader *r, wl_err *err)
{
	wl_plot *p[2] = {wl_plot_create(), wl_plot_create()};
	wl_style band = {{0.55, 0.55, 0.55}, 0.25, 0, 0, WL_MARK_NONE, 0, 0};
	wl_status s = WL_OK;
	char path[4200];
	size_t i, j, k;

	if (!p[0] || !p[1]) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory for the heading plot");
		goto out;
	}
	wl_plot_title(p[0], "heading (unwrapped)");
	wl_plot_ylabel(p[0], "heading (deg)");
	wl_plot_xlabel(p[0], "time (s)");
	wl_plot_title(p[1], "yaw rate");
	wl_plot_ylabel(p[1], "yaw rate (deg/s)");
	wl_plot_xlabel(p[1], "time (s)");
	for (k = 0; k < 2; k++) {
		int first = 1;
		wl_plot_xlim(p[k], r->tmin, r->tmax > r->tmin ? r->tmax : r->tmin + 1);
		for (i = 0; i < r->ntr; i++) {
			const track *t = &r->tr[i];
			for (j = 0; j < t->nspans + (size_t)t->in_span; j++) {
				double t1 = j < t->nspans ? t->spans[j].t1 : t->last_t;
				if ((s = wl_plot_add_band(p[k], 1, t->spans[j].t0, t1, &band,
				                          first ? "left out (trimmed)" : NULL, err)))
					goto out;
				first = 0;
			}
		}
		for (i = 0; i < r->ntr; i++) {
			const track *t = &r->tr[i];
			wl_style st = {{0, 0, 0}, 1, 1.3, 0, WL_MARK_NONE, 0, 0};
			char lab[80];
			wl_palette(i, st.rgb);
			snprintf(lab, sizeof lab, "robot %s", t->id);
			if ((s = wl_plot_add_line(p[k], t->t, k == 0 ? t->hd : t->yr, t->n, &st, lab, err)))
				goto out;
		}
	}
	snprintf(path, sizeof path, "%s/heading.svg", dir);
	if ((s = wl_plot_save(p, 2, 640, 560, path, err)))
		goto out;
	snprintf(path, sizeof path, "%s/heading.png", dir);
	s = wl_plot_save(p, 2, 640, 560, path, err);
out:
	wl_plot_destroy(p[0]);
	wl_plot_destroy(p[1]);
	return s;
}

wl_status wl_report_clip_plots(const char *clip_dir, const wl_report_scene *scene, wl_err *err)
{
	reader *r = calloc(1, sizeof *r);
	circle *cs = calloc(MAX_IDS * 4, sizeof *cs);
	size_t nc = 0, i;
	char path[4200];
	wl_status s;

	if (!r || !cs) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory for the plots of '%s'", clip_dir);
		goto out;
	}
	r->tr = calloc(MAX_IDS, sizeof *r->tr);
	if (!r->tr) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory for the plots of '%s'", clip_dir);
		goto out;
	}
	snprintf(path, sizeof path, "%s/clean.csv", clip_dir);
	r->path = path;
	r->tmin = INFINITY;
	r->tmax = -INFINITY;
	if ((s = wl_clean_read(path, on_row, r, err)))
		goto out;
	if (r->ntr == 0) {
		s = wl_err_set(err, WL_EFORMAT,
		               "%s: no rows: nothing was tracked, so there is nothing to plot", path);
		goto out;
	}
	for (i = 0; i < r->ntr; i++) {
		r->tr[i].stride = (r->tr[i].count + WL_REPORT_MAX_POINTS - 1) / WL_REPORT_MAX_POINTS;
		if (r->tr[i].stride < 1)
			r->tr[i].stride = 1;
		if ((s = alloc_track(&r->tr[i], err)))
			goto out;
	}
	r->pass = 1;
	if ((s = wl_clean_read(path, on_row, r, err)))
		goto out;
	snprintf(path, sizeof path, "%s/summary.json", clip_dir);
	if ((s = read_circles(path, cs, MAX_IDS * 4, &nc, err)))
		goto out;
	if ((s = path_plot(clip_dir, r, cs, nc, scene, err)))
		goto out;
	s = heading_plot(clip_dir, r, err);
out:
	if (r && r->tr) {
		for (i = 0; i < r->ntr; i++)
			track_free(&r->tr[i]);
		free(r->tr);
	}
	free(r);
	free(cs);
	return s;
}

wl_status wl_report_scene_from_calib(const wl_cal_outline *outline, const wl_calib_point *pts, int npts,
                                     wl_report_scene_buf *sb)
{
	size_t nmark = 0;
	memset(sb, 0, sizeof *sb);
	sb->scene.n_outline = (size_t)outline->n;
	memcpy(sb->outline, outline->xy, sizeof sb->outline);
	for (int i = 0; i < npts && nmark < WL_CAL_MAX_POINTS; i++) {
		/* a marker's corners ("7.c0".."7.c3") would only clutter the map:
		 * the plot shows marker centres with their ids */
		if (!wl_cal_point_is_centre(&pts[i]) || !isfinite(pts[i].x_m) || !isfinite(pts[i].y_m))
			continue;
		sb->markers[nmark][0] = pts[i].x_m;
		sb->markers[nmark][1] = pts[i].y_m;
		snprintf(sb->idtext[nmark], sizeof sb->idtext[nmark], "%s", pts[i].id);
		sb->ids[nmark] = sb->idtext[nmark];
		nmark++;
	}
	sb->scene.outline_m = (const double(*)[2])sb->outline;
	sb->scene.n_markers = nmark;
	sb->scene.markers_m = (const double(*)[2])sb->markers;
	sb->scene.marker_ids = sb->ids;
	return WL_OK;
}

wl_status wl_report_scene_load(const char *cal_path, wl_report_scene_buf *sb, wl_err *err)
{
	wl_cal_doc d;
	wl_cal_outline o;
	wl_calib_point *pts = malloc(WL_CAL_MAX_POINTS * sizeof *pts);
	int n = 0;
	wl_status s;
	memset(sb, 0, sizeof *sb);
	if (!pts)
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", cal_path);
	s = wl_cal_doc_read(cal_path, &d, err);
	if (!s && !(s = wl_cal_get_outline(&d, &o, err)) &&
	    !(s = wl_cal_get_points(&d, pts, WL_CAL_MAX_POINTS, &n, err)))
		wl_report_scene_from_calib(&o, pts, n, sb);
	wl_cal_doc_release(&d);
	free(pts);
	return s;
}

void wl_report_scene_release(wl_report_scene_buf *sb)
{
	(void)sb; /* nothing on the heap; kept so that callers need no change when there is */
}
