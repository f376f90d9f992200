/*
 * points.c: the calibration's input tables: hand-picked points
 * (u_px,v_px,x_m,y_m[,z_m][,id]) and marker layouts
 * (marker_id,x_m,y_m[,z_m,size_m,yaw_rad]), read through core/csvio.h with
 * the line of every error.
 */
#include "calib/calib.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "core/csvio.h"

typedef struct {
	int col[6];
	wl_calib_point *pts;
	wl_calib_marker *marks;
	int max, n;
	long lines[WL_CALIB_MAX_POINTS];
} reader;

static wl_status opt_double(const wl_csv_row *row, int col, const char *name, double fallback, double *out,
                            wl_err *err)
{
	if (wl_csv_empty(row, col)) {
		*out = fallback;
		return WL_OK;
	}
	return wl_csv_get_double(row, col, name, out, err);
}

static wl_status points_row(const wl_csv_row *row, void *ctx, wl_err *err)
{
	static const char *const req[] = {"u_px", "v_px", "x_m", "y_m", NULL};
	reader *r = ctx;
	wl_calib_point *p;
	wl_status st;
	if (row->index == 0) {
		if ((st = wl_csv_require(row, req, err)))
			return st;
		for (int i = 0; i < 4; i++)
			r->col[i] = wl_csv_col(row, req[i]);
		r->col[4] = wl_csv_col(row, "z_m");
		r->col[5] = wl_csv_col(row, "id");
		return WL_OK;
	}
	if (r->n >= r->max)
		return wl_err_set(err, WL_ELIMIT, "%s:%ld: more than %d points", row->path, row->line,
		                  r->max);
	p = &r->pts[r->n];
	memset(p, 0, sizeof *p);
	if ((st = wl_csv_get_double(row, r->col[0], "u_px", &p->u_px, err)) ||
	    (st = wl_csv_get_double(row, r->col[1], "v_px", &p->v_px, err)) ||
	    (st = wl_csv_get_double(row, r->col[2], "x_m", &p->x_m, err)) ||
	    (st = wl_csv_get_double(row, r->col[3], "y_m", &p->y_m, err)) ||
	    (st = opt_double(row, r->col[4], "z_m", 0, &p->z_m, err)))
		return st;
	if (!wl_csv_empty(row, r->col[5]))
		snprintf(p->id, sizeof p->id, "%s", row->fields[r->col[5]]);
	else
		snprintf(p->id, sizeof p->id, "line %ld", row->line);
	p->used = 1;
	p->residual_px = p->residual_mm = NAN;
	r->n++;
	return WL_OK;
}

wl_status wl_calib_read_points(const char *path, wl_calib_point *pts, int max, int *n, wl_err *err)
{
	reader r;
	wl_status st;
	memset(&r, 0, sizeof r);
	r.pts = pts;
	r.max = max;
	*n = 0;
	if ((st = wl_csv_read(path, points_row, &r, err)))
		return st;
	if (r.n < 4)
		return wl_err_set(err, WL_ECALIB, "%s: %d point%s, calibration needs at least 4: add points",
		                  path, r.n, r.n == 1 ? "" : "s");
	*n = r.n;
	return WL_OK;
}

static wl_status layout_row(const wl_csv_row *row, void *ctx, wl_err *err)
{
	static const char *const req[] = {"marker_id", "x_m", "y_m", NULL};
	reader *r = ctx;
	wl_calib_marker *m;
	wl_status st;
	long id;
	if (row->index == 0) {
		if ((st = wl_csv_require(row, req, err)))
			return st;
		r->col[0] = wl_csv_col(row, "marker_id");
		r->col[1] = wl_csv_col(row, "x_m");
		r->col[2] = wl_csv_col(row, "y_m");
		r->col[3] = wl_csv_col(row, "z_m");
		r->col[4] = wl_csv_col(row, "size_m");
		r->col[5] = wl_csv_col(row, "yaw_rad");
		return WL_OK;
	}
	if (r->n >= r->max)
		return wl_err_set(err, WL_ELIMIT, "%s:%ld: more than %d markers", row->path, row->line,
		                  r->max);
	m = &r->marks[r->n];
	memset(m, 0, sizeof *m);
	if ((st = wl_csv_get_long(row, r->col[0], "marker_id", &id, err)))
		return st;
	if (id < 0 || id > 100000)
		return wl_err_set(err, WL_EFORMAT, "%s:%ld: marker_id %ld is out of range (0 to 100000)",
		                  row->path, row->line, id);
	for (int i = 0; i < r->n; i++)
		if (r->marks[i].id == id)
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: marker_id %ld appears again (first on line %ld): list "
			                  "each marker once",
			                  row->path, row->line, id, r->lines[i]);
	m->id = id;
	m->line = row->line;
	if ((st = wl_csv_get_double(row, r->col[1], "x_m", &m->x_m, err)) ||
	    (st = wl_csv_get_double(row, r->col[2], "y_m", &m->y_m, err)) ||
	    (st = opt_double(row, r->col[3], "z_m", 0, &m->z_m, err)) ||
	    (st = opt_double(row, r->col[4], "size_m", 0, &m->size_m, err)) ||
	    (st = opt_double(row, r->col[5], "yaw_rad", 0, &m->yaw_rad, err)))
		return st;
	if (m->size_m < 0)
		return wl_err_set(err, WL_EFORMAT, "%s:%ld: column 'size_m': %g is negative", row->path,
		                  row->line, m->size_m);
	r->lines[r->n] = row->line;
	r->n++;
	return WL_OK;
}

wl_status wl_calib_read_layout(const char *path, wl_calib_marker *marks, int max, int *n, wl_err *err)
{
	reader r;
	wl_status st;
	memset(&r, 0, sizeof r);
	r.marks = marks;
	r.max = max < WL_CALIB_MAX_POINTS ? max : WL_CALIB_MAX_POINTS;
	*n = 0;
	if ((st = wl_csv_read(path, layout_row, &r, err)))
		return st;
	if (r.n < 4)
		return wl_err_set(err, WL_ECALIB,
		                  "%s: %d marker%s listed, calibration needs at least 4: add rows", path, r.n,
		                  r.n == 1 ? "" : "s");
	*n = r.n;
	return WL_OK;
}

void wl_calib_marker_corners(const wl_calib_marker *m, double xy[4][2])
{
	/* corner k at (∓s/2, ∓s/2) in the marker frame, turned by yaw; order
	 * as in WL_CALIB_CORNER_ORDER (calib.h) */
	static const double sx[4] = {-1, 1, 1, -1}, sy[4] = {-1, -1, 1, 1};
	double c = cos(m->yaw_rad), s = sin(m->yaw_rad), h = m->size_m / 2;
	for (int k = 0; k < 4; k++) {
		double x = sx[k] * h, y = sy[k] * h;
		xy[k][0] = m->x_m + c * x - s * y;
		xy[k][1] = m->y_m + s * x + c * y;
	}
}
