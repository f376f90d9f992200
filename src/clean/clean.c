/*
 * clean.c: the clean-and-segment stage's driver, one robot at a time:
 *   1. pieces: detections closer than max_gap_s in time form a piece; the
 *      lost rows inside a piece are bridged ('filled'), longer gaps split
 *      (here);
 *   2. noise: measurement noise by a robust rule, process noise by maximum
 *      likelihood (smooth.c);
 *   3. smoothing (Rauch-Tung-Striebel over a kinematic model, or local
 *      Savitzky-Golay fits in t) with chi-square gating (smooth.c);
 *   4. motion onset, settling, wall cut, segments (segment.c);
 *   5. rows, optionally resampled evenly (rows.c).
 * Parameters, their checks and the outline distance are in params.c.
 * Methods and defaults are documented in docs/clean.md.
 */
#include "clean/clean.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/angle.h"

#include "clean/clean_work.h"

static int cmp_double(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return x < y ? -1 : x > y;
}

double clean_median(double *v, size_t n)
{
	if (n == 0)
		return NAN;
	qsort(v, n, sizeof *v, cmp_double);
	return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

/* ------------------------------------------------------ per-robot working */

void clean_work_free(work *w)
{
	free(w->src);
	free(w->piece);
	free(w->t);
	free(w->zx);
	free(w->zy);
	free(w->zh);
	free(w->rs);
	free(w->mpos);
	free(w->mh);
	free(w->why);
	free(w->x);
	free(w->y);
	free(w->h);
	free(w->vx);
	free(w->vy);
	free(w->r);
	free(w->sv);
	free(w->sr);
	free(w->sp);
	free(w->cut);
	free(w->seg);
	free(w->pstart);
	free(w->phas_h);
	memset(w, 0, sizeof *w);
}

int clean_work_alloc(work *w, size_t n, size_t npieces)
{
	size_t m = n ? n : 1;
	w->n = n;
	w->npieces = npieces;
	w->src = calloc(m, sizeof *w->src);
	w->piece = calloc(m, sizeof *w->piece);
	w->t = calloc(m, sizeof *w->t);
	w->zx = calloc(m, sizeof *w->zx);
	w->zy = calloc(m, sizeof *w->zy);
	w->zh = calloc(m, sizeof *w->zh);
	w->rs = calloc(m, sizeof *w->rs);
	w->mpos = calloc(m, 1);
	w->mh = calloc(m, 1);
	w->why = calloc(m, 1);
	w->x = calloc(m, sizeof *w->x);
	w->y = calloc(m, sizeof *w->y);
	w->h = calloc(m, sizeof *w->h);
	w->vx = calloc(m, sizeof *w->vx);
	w->vy = calloc(m, sizeof *w->vy);
	w->r = calloc(m, sizeof *w->r);
	w->sv = calloc(m, sizeof *w->sv);
	w->sr = calloc(m, sizeof *w->sr);
	w->sp = calloc(m, sizeof *w->sp);
	w->cut = calloc(m, sizeof *w->cut);
	w->seg = calloc(m, sizeof *w->seg);
	w->pstart = calloc(npieces + 1, sizeof *w->pstart);
	w->phas_h = calloc(npieces + 1, 1);
	return w->src && w->piece && w->t && w->zx && w->zy && w->zh && w->rs && w->mpos && w->mh && w->why &&
	       w->x && w->y && w->h && w->vx && w->vy && w->r && w->sv && w->sr && w->sp && w->cut &&
	       w->seg && w->pstart && w->phas_h;
}

static int gap_push(wl_clean_robot *rb, double t0, double t1, int filled)
{
	wl_clean_gap *g = realloc(rb->gaps, (rb->ngaps + 1) * sizeof *g);
	if (!g)
		return 0;
	rb->gaps = g;
	g[rb->ngaps].t0_s = t0;
	g[rb->ngaps].t1_s = t1;
	g[rb->ngaps].filled = filled;
	rb->ngaps++;
	if (filled)
		rb->gaps_filled++;
	else
		rb->gaps_split++;
	return 1;
}

/* Splits the track into pieces at gaps longer than max_gap_s and copies the
 * kept samples into w. */
static wl_status build_pieces(const wl_clean_raw_track *tr, const wl_clean_params *p, wl_clean_robot *rb,
                              work *w, wl_err *err)
{
	size_t ndet = 0, npieces = 0, n = 0, prev = (size_t)-1, first = 0, k = 0;
	size_t *pf = NULL, *pl = NULL;
	double *dts = NULL;
	wl_status st = WL_OK;
	for (size_t i = 0; i < tr->n; i++)
		ndet += tr->s[i].has_pos;
	if (ndet == 0) {
		clean_work_alloc(w, 0, 0);
		return WL_OK;
	}
	pf = malloc(ndet * sizeof *pf);
	pl = malloc(ndet * sizeof *pl);
	dts = malloc(ndet * sizeof *dts);
	if (!pf || !pl || !dts) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory");
		goto out;
	}
	for (size_t i = 0; i < tr->n; i++) {
		if (!tr->s[i].has_pos)
			continue;
		if (prev == (size_t)-1) {
			first = i;
		} else {
			double dt = tr->s[i].t_s - tr->s[prev].t_s;
			int split = dt > p->max_gap_s;
			if (i > prev + 1 && !gap_push(rb, tr->s[prev].t_s, tr->s[i].t_s, !split)) {
				st = wl_err_set(err, WL_ENOMEM, "out of memory");
				goto out;
			}
			if (split) {
				if (i == prev + 1 && !gap_push(rb, tr->s[prev].t_s, tr->s[i].t_s, 0)) {
					st = wl_err_set(err, WL_ENOMEM, "out of memory");
					goto out;
				}
				pf[npieces] = first;
				pl[npieces++] = prev;
				first = i;
			} else {
				dts[k++] = dt;
			}
		}
		prev = i;
	}
	pf[npieces] = first;
	pl[npieces++] = prev;
	for (size_t q = 0; q < npieces; q++)
		n += pl[q] - pf[q] + 1;
	if (!clean_work_alloc(w, n, npieces)) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory (%zu samples)", n);
		goto out;
	}
	w->dt_med = k ? clean_median(dts, k) : 1.0 / 30;
	n = 0;
	for (size_t q = 0; q < npieces; q++) {
		w->pstart[q] = n;
		for (size_t i = pf[q]; i <= pl[q]; i++, n++) {
			const wl_clean_raw_sample *s = &tr->s[i];
			w->src[n] = i;
			w->piece[n] = (int)q;
			w->t[n] = s->t_meas_s; /* the pose's own time (rolling shutter) */
			w->rs[n] = s->held ? HELD_VAR_SCALE : 1.0;
			w->zx[n] = s->has_pos ? s->x_m : NAN;
			w->zy[n] = s->has_pos ? s->y_m : NAN;
			w->zh[n] = s->has_pos && s->has_heading ? s->heading_rad : NAN;
			if (isfinite(w->zh[n]))
				w->phas_h[q] = 1;
		}
	}
	w->pstart[npieces] = n;
	rb->dropped = tr->n - n;
out:
	free(pf);
	free(pl);
	free(dts);
	return st;
}

/* ---------------------------------------------------------------- driver */

/* Says when the noise model had to be widened or the filter restarted, and
 * when many detections are rejected all the same: each is a sign that the
 * track is not what the model expects (a manoeuvre, a wrong noise level, or
 * the tracker following something else). */
static void warn_model(const wl_clean_params *p, const wl_diag *diag, const wl_clean_robot *rb)
{
	size_t ndet = rb->measured + rb->outliers;
	double frac = ndet ? (double)rb->outliers / (double)ndet : 0;
	if (rb->widen_pos || rb->widen_heading)
		wl_diag_warn(
		        diag, "clean",
		        "robot %ld: the detections did not fit the estimated noise model (more than "
		        "%.0f%% beyond the gate, or far more than 5%% beyond its 95%% point): the model "
		        "was widened (position %d, heading %d steps of x4 variance and x10 process "
		        "noise; noise now %.2f mm, %.2f deg) and %zu of %zu (%.1f%%) are rejected: check "
		        "the track (clean.json, robots[].noise)",
		        rb->id, 100 * p->max_reject_frac, rb->widen_pos, rb->widen_heading,
		        1e3 * rb->sigma_pos_m, rb->sigma_heading_rad / WL_DEG, rb->outliers, ndet,
		        100 * frac);
	else if (frac > p->max_reject_frac)
		wl_diag_warn(
		        diag, "clean",
		        "robot %ld: %zu of %zu detections (%.1f%%) rejected as outliers: check the track",
		        rb->id, rb->outliers, ndet, 100 * frac);
	if (rb->restarts_pos + rb->restarts_heading > 0)
		wl_diag_warn(diag, "clean",
		             "robot %ld: the smoother restarted %zu times (position) and %zu times (heading) "
		             "after runs of %d or more detections it could not follow (sudden manoeuvres, or "
		             "the tracker jumped): see clean.json, robots[].restarts",
		             rb->id, rb->restarts_pos, rb->restarts_heading, 3);
}

/* The detector's resolution: no detection locates a tag better than this
 * many pixels (sub-pixel corner and centroid refinement reaches a few
 * hundredths of a pixel: common practice, from memory).  A robot at rest
 * in a compressed clip is seen in identical pixels from frame to frame
 * (the encoder repeats the block) and moves at each key frame by its real
 * detection noise (about 0.025 px in our renders), so the MAD of its
 * residuals is 0 and every key frame would look like an outlier; the
 * measurement noise is kept at least this resolution.  The robustness
 * suite's moving robots show 0.02-0.7 px (median 0.06 px, 5% under
 * 0.024 px), so the floor hardly touches their estimates. */
#define NOISE_FLOOR_PX 0.03

/* Metres per coded pixel over the file, from RAW.csv's own pairs of image
 * (u_px, v_px) and tank (x_m, y_m) positions: the median ratio of the
 * distances from each pose to the farther of two anchors (the first pose
 * and the one farthest from it in the image), over poses at least 20 px
 * from it.  NaN when every pose lies within 20 px of the others (one still
 * tag alone in the file): then there is no scale, and no floor.  The
 * marker planes' heights change the scale by their share of the camera's
 * height (a tenth or so), which is close enough for a floor. */
static double raw_pixel_m(const wl_clean_raw *raw)
{
	const wl_clean_raw_sample *a = NULL, *b = NULL;
	double best = 0, *r, out;
	size_t m = 0;
	for (size_t k = 0; k < raw->ntracks; k++)
		for (size_t i = 0; i < raw->tracks[k].n; i++) {
			const wl_clean_raw_sample *s = &raw->tracks[k].s[i];
			double d;
			if (!s->has_pos || !isfinite(s->u_px) || !isfinite(s->v_px))
				continue;
			if (!a)
				a = s;
			d = hypot(s->u_px - a->u_px, s->v_px - a->v_px);
			if (d > best)
				best = d, b = s;
		}
	if (!b || best < 20 || !(r = malloc(raw->nrows * sizeof *r)))
		return NAN;
	for (size_t k = 0; k < raw->ntracks; k++)
		for (size_t i = 0; i < raw->tracks[k].n; i++) {
			const wl_clean_raw_sample *s = &raw->tracks[k].s[i], *o;
			double da, db, dp;
			if (!s->has_pos || !isfinite(s->u_px) || !isfinite(s->v_px))
				continue;
			da = hypot(s->u_px - a->u_px, s->v_px - a->v_px);
			db = hypot(s->u_px - b->u_px, s->v_px - b->v_px);
			o = da > db ? a : b;
			dp = fmax(da, db);
			if (dp >= 20 && m < raw->nrows)
				r[m++] = hypot(s->x_m - o->x_m, s->y_m - o->y_m) / dp;
		}
	out = clean_median(r, m);
	free(r);
	return out > 0 ? out : NAN;
}

/* Median tag side (or blob diameter) of a robot's poses, px; NaN if none. */
static double track_size_px(const wl_clean_raw_track *tr)
{
	double *v = malloc((tr->n ? tr->n : 1) * sizeof *v), out;
	size_t m = 0;
	if (!v)
		return NAN;
	for (size_t i = 0; i < tr->n; i++)
		if (tr->s[i].has_pos && tr->s[i].size_px > 0)
			v[m++] = tr->s[i].size_px;
	out = clean_median(v, m);
	free(v);
	return out;
}

static wl_status clean_robot(const wl_clean_raw_track *tr, const wl_clean_params *p, double pixel_m,
                             const wl_diag *diag, wl_clean_robot *rb, wl_clean_result *res, size_t *cap,
                             wl_err *err)
{
	double size_px = track_size_px(tr);
	work w = {0};
	wl_status st;
	double s;
	rb->id = tr->id;
	rb->rows_in = tr->n;
	rb->sigma_pos_floor_m = rb->sigma_heading_floor_rad = NAN;
	rb->t_first_s = tr->n ? tr->s[0].t_s : NAN;
	rb->t_last_s = tr->n ? tr->s[tr->n - 1].t_s : NAN;
	if ((st = build_pieces(tr, p, rb, &w, err)))
		goto out;
	if (w.n == 0) {
		rb->still = 1;
		rb->trim_reason = rb->end_reason = "no-detections";
		rb->onset_s = rb->trim_s = rb->wall_s = rb->period_s = rb->window_s = NAN;
		rb->sigma_pos_m = rb->sigma_heading_rad = rb->q_pos = rb->q_heading = NAN;
		rb->dropped = tr->n;
		goto out;
	}
	/* measurement noise: given, else the MAD rule, else a documented default
	 * (2 mm, 2 degrees) for tracks too short to estimate it */
	rb->sigma_estimated = !(p->sigma_pos_m > 0) || !(p->sigma_heading_rad > 0);
	if (p->sigma_pos_m > 0) {
		rb->sigma_pos_m = p->sigma_pos_m;
	} else {
		double sx = clean_mad_sigma(&w, w.zx, 0), sy = clean_mad_sigma(&w, w.zy, 0);
		s = isfinite(sx) && isfinite(sy) ? sqrt(0.5 * (sx * sx + sy * sy)) : 0.002;
		if (!isfinite(sx) || !isfinite(sy))
			rb->sigma_estimated = 2;
		rb->sigma_pos_floor_m = isfinite(pixel_m) ? NOISE_FLOOR_PX * pixel_m : 1e-5;
		rb->sigma_pos_m = fmax(s, rb->sigma_pos_floor_m);
	}
	if (p->sigma_heading_rad > 0) {
		rb->sigma_heading_rad = p->sigma_heading_rad;
	} else {
		s = clean_mad_sigma(&w, w.zh, 1);
		if (!isfinite(s))
			rb->sigma_estimated = 2;
		/* a heading from a tag's edges: the floor over the tag's side */
		rb->sigma_heading_floor_rad = size_px > 0 ? fmax(NOISE_FLOOR_PX / size_px, 1e-4) : 1e-4;
		rb->sigma_heading_rad = fmax(isfinite(s) ? s : 0.035, rb->sigma_heading_floor_rad);
	}
	rb->sigma_pos_est_m = rb->sigma_pos_m;
	rb->sigma_heading_est_rad = rb->sigma_heading_rad;
	st = p->smoother == WL_CLEAN_SG ? clean_smooth_sg(&w, p, rb, err) : clean_smooth_rts(&w, p, rb, err);
	if (st)
		goto out;
	for (size_t i = 0; i < w.n; i++) {
		wl_clean_status ss = clean_status_of(&w, i);
		rb->measured += ss == WL_ST_MEASURED;
		rb->filled += ss == WL_ST_FILLED;
		rb->outliers += ss == WL_ST_OUTLIER;
		rb->outliers_pos += (w.why[i] & 1) != 0;
		rb->outliers_heading += (w.why[i] & 2) != 0;
	}
	clean_cut_and_segment(&w, p, rb);
	/* a still robot is not analysed, so what its model rejected changes no
	 * number (a floor marker tracked as a robot: a small tag's detection
	 * may jump at each key frame); the still line says what it is */
	if (!rb->still)
		warn_model(p, diag, rb);
	if ((st = clean_list_segments(&w, rb, err)))
		goto out;
	st = clean_emit_rows(&w, tr, p, res, cap, rb, err);
out:
	clean_work_free(&w);
	return st;
}

static int cmp_row(const void *a, const void *b)
{
	const wl_clean_row *x = a, *y = b;
	if (x->t_s != y->t_s)
		return x->t_s < y->t_s ? -1 : 1;
	if (x->frame != y->frame)
		return x->frame < y->frame ? -1 : 1;
	return (x->id > y->id) - (x->id < y->id);
}

wl_status wl_clean_run(const wl_clean_raw *raw, const wl_clean_params *p, const wl_diag *diag,
                       wl_clean_result *out, wl_err *err)
{
	wl_status st;
	size_t cap = 0;
	double pixel_m;
	memset(out, 0, sizeof *out);
	if ((st = wl_clean_params_check(p, err)))
		return st;
	if (p->n_outline == 0)
		wl_diag_warn(
		        diag, "clean",
		        "%s: no tank outline, so tracks are not cut at the tank wall: give a CAL.json with "
		        "tank_outline_m (--cal) or the tank rectangle (--tank)",
		        raw->path);
	if (!(out->robots = calloc(raw->ntracks ? raw->ntracks : 1, sizeof *out->robots)))
		return wl_err_set(err, WL_ENOMEM, "out of memory");
	pixel_m = raw_pixel_m(raw);
	for (size_t k = 0; k < raw->ntracks; k++) {
		out->nrobots++;
		if ((st = clean_robot(&raw->tracks[k], p, pixel_m, diag, &out->robots[k], out, &cap, err)))
			return wl_err_prefix(err, st, "%s: robot %ld", raw->path, raw->tracks[k].id);
	}
	if (out->nrows)
		qsort(out->rows, out->nrows, sizeof *out->rows, cmp_row);
	return WL_OK;
}

void wl_clean_result_release(wl_clean_result *res)
{
	if (!res)
		return;
	for (size_t k = 0; k < res->nrobots; k++) {
		free(res->robots[k].gaps);
		free(res->robots[k].segments);
	}
	free(res->robots);
	free(res->rows);
	memset(res, 0, sizeof *res);
}

void wl_clean_source_init(wl_clean_source *src, const wl_clean_raw *raw)
{
	memset(src, 0, sizeof *src);
	src->input_path = raw->path;
	src->input_bytes = raw->bytes;
	src->input_sha256 = raw->sha256_hex;
	src->input_rows = raw->nrows;
	src->camera = raw->camera_found ? &raw->camera : NULL;
}
