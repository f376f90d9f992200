/*
 * driver.c: the measure stage's driver (see measure.h, wl_measure_clean).
 * Streams CLEAN.csv through formats/clean.h, takes the rows of segment >= 0,
 * gathers one segment of one robot at a time, hands it to wl_measure_run as
 * soon as it ends, and returns one run per robot per segment, the longest
 * segment of each robot marked headline.  Memory holds the open segment of
 * each robot, not the whole file.
 */
#define _POSIX_C_SOURCE 200809L
#include "measure/measure.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "formats/clean.h"
#include "formats/format.h"

/* The rows of one open segment of one robot. */
typedef struct {
	long id;
	double first_t_s, last_t_s;
	long seg_line, segment;
	size_t n, cap, nout; /* rows; of them rejected as outliers */
	size_t nout_moved;   /* ... of those, in a held camera move's bracket (not counted) */
	double *t, *x, *y, *h, *sp, *yr, *hm;
	unsigned char *meas;
} robot;

typedef struct {
	const char *path;
	const wl_measure_clean_opts *o;
	robot *robots;
	size_t nrobots;
	wl_summary *out;
	long *first_line;      /* of each run, for the message about a repeated segment */
	double *outlier_share; /* of each run, for its verdict */
	size_t caprun;
	int skipped;
	int camera_known;      /* CLEAN.json beside the input carries the camera watch's record */
	wl_rawside *camera;    /* that record (owned) */
	wl_clean_sidecar side; /* nrobots 0: none */
	const wl_calib *cal;   /* the calibration of sys (its plane height is the default) */
} ctx;

void wl_measure_clean_opts_init(wl_measure_clean_opts *o)
{
	memset(o, 0, sizeof *o);
	wl_measure_opts_init(&o->run);
	o->commanded_period_s = NAN;
	o->plane_height_m = o->plane_height_sd_m = NAN;
}

/* The marker plane of robot id and its tolerance. */
static void plane_of(const ctx *c, long id, double *z, double *sd)
{
	const wl_measure_clean_opts *o = c->o;
	*z = o->plane_height_m;
	*sd = o->plane_height_sd_m;
	for (size_t i = 0; i < o->nplanes; i++)
		if (o->planes[i].id == id) {
			if (isfinite(o->planes[i].plane_height_m))
				*z = o->planes[i].plane_height_m;
			if (isfinite(o->planes[i].plane_height_sd_m))
				*sd = o->planes[i].plane_height_sd_m;
		}
	if (!isfinite(*z))
		*z = c->cal ? c->cal->plane_height_m : 0;
}

static void robot_release(robot *r)
{
	free(r->t);
	free(r->x);
	free(r->y);
	free(r->h);
	free(r->hm);
	free(r->sp);
	free(r->yr);
	free(r->meas);
}

static wl_status robot_grow(robot *r, wl_err *err)
{
	size_t cap = r->cap ? 2 * r->cap : 1024;
	double **arr[] = {&r->t, &r->x, &r->y, &r->h, &r->sp, &r->yr, &r->hm};
	unsigned char *m;
	for (size_t i = 0; i < sizeof arr / sizeof arr[0]; i++) {
		double *p = realloc(*arr[i], cap * sizeof **arr[i]);
		if (!p)
			return wl_err_set(err, WL_ENOMEM, "out of memory for a segment of %zu rows", cap);
		*arr[i] = p;
	}
	m = realloc(r->meas, cap);
	if (!m)
		return wl_err_set(err, WL_ENOMEM, "out of memory for a segment of %zu rows", cap);
	r->meas = m;
	r->cap = cap;
	return WL_OK;
}

static wl_status add_run(ctx *c, wl_summary_run **o, wl_err *err)
{
	wl_summary *s = c->out;
	if (s->nruns == c->caprun) {
		size_t cap = c->caprun ? 2 * c->caprun : 16;
		wl_summary_run *p = realloc(s->runs, cap * sizeof *p);
		long *l;
		if (!p)
			return wl_err_set(err, WL_ENOMEM, "out of memory for %zu runs", cap);
		s->runs = p;
		if (!(l = realloc(c->first_line, cap * sizeof *l)))
			return wl_err_set(err, WL_ENOMEM, "out of memory for %zu runs", cap);
		c->first_line = l;
		{
			double *os = realloc(c->outlier_share, cap * sizeof *os);
			if (!os)
				return wl_err_set(err, WL_ENOMEM, "out of memory for %zu runs", cap);
			c->outlier_share = os;
		}
		c->caprun = cap;
	}
	*o = &s->runs[s->nruns];
	memset(*o, 0, sizeof **o);
	(*o)->camera_moves = (*o)->camera_suspect_s = NAN;
	return WL_OK;
}

/* Measures the open segment of r and empties it.  A segment too short to
 * measure is skipped with a warning; a repeated (id, segment) is an error. */
static wl_status finish_segment(ctx *c, robot *r, wl_err *err)
{
	wl_measure_input in = {r->n, r->t, r->x, r->y, r->h, r->sp, r->yr, r->meas, r->hm};
	wl_summary_run *o = NULL;
	wl_status st, rs;
	wl_err e2;
	if (r->n == 0)
		return WL_OK;
	for (size_t i = 0; i < c->out->nruns; i++)
		if (c->out->runs[i].id == r->id && c->out->runs[i].segment == r->segment)
			return wl_err_set(
			        err, WL_EFORMAT,
			        "%s:%ld: segment %ld of id %ld starts again after other rows "
			        "(first at line %ld): give each segment of a robot one block of rows",
			        c->path, r->seg_line, r->segment, r->id, c->first_line[i]);
	if ((st = add_run(c, &o, err)))
		return st;
	wl_err_clear(&e2);
	rs = wl_measure_run(&in, &c->o->run, &o->m, &e2);
	if (rs == WL_OK && c->o->sys) {
		double z, sd;
		plane_of(c, r->id, &z, &sd);
		if ((st = wl_measure_budget(&in, &c->o->run, c->o->sys, z, sd, &o->m, err)))
			return wl_err_prefix(err, st, "%s:%ld: id %ld segment %ld", c->path, r->seg_line,
			                     r->id, r->segment);
	}
	if (rs != WL_OK) {
		wl_diag_warn(c->o->diag, "measure", "%s:%ld: id %ld segment %ld not measured: %s", c->path,
		             r->seg_line, r->id, r->segment, e2.msg);
		c->skipped++;
	} else {
		o->id = r->id;
		o->segment = r->segment;
		o->trim_start_s = r->t[0] - r->first_t_s;
		o->commanded_period_s = c->o->commanded_period_s;
		if (c->camera_known) {
			o->camera_moves = wl_rawside_moves_in(c->camera, r->t[0], r->t[r->n - 1]);
			o->camera_suspect_s = wl_rawside_suspect_s(c->camera, r->t[0], r->t[r->n - 1]);
		}
		c->first_line[c->out->nruns] = r->seg_line;
		c->outlier_share[c->out->nruns] = (double)(r->nout - r->nout_moved) / (double)r->n;
		c->out->nruns++;
	}
	r->n = 0;
	r->nout = r->nout_moved = 0;
	return WL_OK;
}

static robot *find_robot(ctx *c, long id, wl_err *err)
{
	robot *p;
	for (size_t i = 0; i < c->nrobots; i++)
		if (c->robots[i].id == id)
			return &c->robots[i];
	p = realloc(c->robots, (c->nrobots + 1) * sizeof *p);
	if (!p) {
		wl_err_set(err, WL_ENOMEM, "out of memory for robot %ld", id);
		return NULL;
	}
	c->robots = p;
	p = &c->robots[c->nrobots++];
	memset(p, 0, sizeof *p);
	p->id = id;
	p->first_t_s = NAN;
	p->last_t_s = -INFINITY;
	p->segment = -1;
	return p;
}

static wl_status on_row(const wl_clean_row *row, void *vctx, wl_err *err)
{
	ctx *c = vctx;
	robot *r;
	wl_status st;
	size_t k;
	if (!(r = find_robot(c, row->id, err)))
		return WL_ENOMEM;
	if (!(row->t_s > r->last_t_s))
		return wl_err_set(
		        err, WL_EFORMAT,
		        "%s:%ld: t_s %.6f of id %ld is not after its previous row's %.6f: sort the rows "
		        "by time",
		        c->path, row->line, row->t_s, row->id, r->last_t_s);
	r->last_t_s = row->t_s;
	if (isnan(r->first_t_s))
		r->first_t_s = row->t_s;
	if (r->n > 0 && row->segment != r->segment && (st = finish_segment(c, r, err)))
		return st;
	if (row->segment < 0)
		return WL_OK;
	if (r->n == 0) {
		r->segment = row->segment;
		r->seg_line = row->line;
	}
	if (r->n == r->cap && (st = robot_grow(r, err)))
		return st;
	k = r->n++;
	r->t[k] = row->t_s, r->x[k] = row->x_m, r->y[k] = row->y_m, r->h[k] = row->heading_rad;
	r->sp[k] = row->speed_mps, r->yr[k] = row->yaw_rate_radps, r->hm[k] = row->heading_meas_rad;
	r->meas[k] = row->status == WL_ST_MEASURED;
	if (row->status == WL_ST_OUTLIER) {
		r->nout++;
		for (int i = 0; c->camera_known && i < c->camera->n_moves; i++)
			if (wl_verdict_move_held(c->camera, i, row->t_s)) {
				r->nout_moved++;
				break;
			}
	}
	return WL_OK;
}

/* The verdict of every run, once the whole file is read (a robot's track
 * length is known only at its end). */
static void verdicts(ctx *c)
{
	for (size_t i = 0; i < c->out->nruns; i++) {
		wl_summary_run *o = &c->out->runs[i];
		wl_verdict_input v;
		wl_verdict_input_init(&v);
		v.outlier_share = c->outlier_share[i];
		v.camera = c->camera_known ? c->camera : NULL;
		v.t0_s = o->m.t_start_s;
		v.t1_s = o->m.t_start_s + o->m.duration_s;
		for (size_t k = 0; k < c->nrobots; k++)
			if (c->robots[k].id == o->id && c->robots[k].last_t_s > c->robots[k].first_t_s)
				v.trim_share =
				        o->trim_start_s / (c->robots[k].last_t_s - c->robots[k].first_t_s);
		for (size_t k = 0; k < c->side.nrobots; k++) {
			const wl_clean_sidecar_robot *sr = &c->side.robots[k];
			if (sr->id != o->id)
				continue;
			v.noise_pos_m = sr->sigma_pos_m;
			v.widened = sr->widened;
			v.not_settled = strcmp(sr->trim_reason, "not-settled") == 0;
		}
		wl_measure_verdict(&v, &o->m);
	}
}

static int run_cmp(const void *pa, const void *pb)
{
	const wl_summary_run *a = pa, *b = pb;
	if (a->id != b->id)
		return a->id < b->id ? -1 : 1;
	return a->segment < b->segment ? -1 : a->segment > b->segment;
}

static void mark_headlines(wl_summary *s)
{
	for (size_t i = 0; i < s->nruns;) {
		size_t j = i, best = i;
		for (; j < s->nruns && s->runs[j].id == s->runs[i].id; j++)
			if (s->runs[j].m.duration_s > s->runs[best].m.duration_s)
				best = j;
		s->runs[best].headline = 1;
		i = j;
	}
}

/* The camera watch's record: from the CLEAN.json the verdict reads (given,
 * and read once), else from CLEAN.json beside CLEAN.csv (same stem, as
 * `wakeline clean` and `process` name it) when there is one; a sidecar that
 * is missing or unreadable leaves the camera columns unknown. */
static void camera_record(ctx *c, const char *clean_path)
{
	char path[4096];
	wl_clean_sidecar *sc;
	wl_err ignore;
	if (c->o->clean_sidecar) {
		if (c->side.camera_known && (c->camera = malloc(sizeof *c->camera))) {
			*c->camera = c->side.camera;
			c->camera_known = 1;
		}
		return;
	}
	if (!wl_format_sidecar_path(clean_path, path, sizeof path))
		return;
	if (!(sc = malloc(sizeof *sc)))
		return;
	if (wl_clean_sidecar_read(path, sc, &ignore) == WL_OK) {
		if (sc->camera_known && (c->camera = malloc(sizeof *c->camera))) {
			*c->camera = sc->camera;
			c->camera_known = 1;
		}
		wl_clean_sidecar_release(sc);
	}
	free(sc);
}

static wl_status run(const char *name, const wl_measure_clean_opts *o, wl_summary *out, const char *data,
                     size_t len, wl_err *err)
{
	ctx c;
	wl_status st;
	memset(&c, 0, sizeof c);
	c.path = name;
	c.o = o;
	c.out = out;
	c.cal = o->cal;
	if (o->clean_sidecar && (st = wl_clean_sidecar_read(o->clean_sidecar, &c.side, err)))
		goto out;
	wl_summary_init(out);
	out->body_diameter_m = o->run.body_diameter_m;
	out->commanded_period_s = o->commanded_period_s;
	out->min_arc_deg = o->run.min_arc_deg;
	if (!(out->input = strdup(name))) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", name);
		goto out;
	}
	if (!data)
		camera_record(&c, name);
	st = data ? wl_clean_read_mem(name, data, len, on_row, &c, err)
	          : wl_clean_read(name, on_row, &c, err);
	for (size_t i = 0; !st && i < c.nrobots; i++)
		st = finish_segment(&c, &c.robots[i], err);
	if (!st && out->nruns == 0)
		st = wl_err_set(
		        err, WL_EFORMAT,
		        "%s: no segment could be measured (%d skipped): check the clean stage's segments",
		        name, c.skipped);
	if (!st)
		verdicts(&c);
	if (!st) {
		qsort(out->runs, out->nruns, sizeof *out->runs, run_cmp);
		mark_headlines(out);
	}
out:
	for (size_t i = 0; i < c.nrobots; i++)
		robot_release(&c.robots[i]);
	free(c.robots);
	free(c.first_line);
	free(c.camera);
	free(c.outlier_share);
	wl_clean_sidecar_release(&c.side);
	return st;
}

wl_status wl_measure_clean(const char *clean_path, const wl_measure_clean_opts *o, wl_summary *out,
                           wl_err *err)
{
	return run(clean_path, o, out, NULL, 0, err);
}

wl_status wl_measure_clean_mem(const char *name, const char *data, size_t len, const wl_measure_clean_opts *o,
                               wl_summary *out, wl_err *err)
{
	return run(name, o, out, data ? data : "", len, err);
}
