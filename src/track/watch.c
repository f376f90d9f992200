/*
 * watch.c: the camera watch (watch.h).  Each check looks for every floor
 * marker of the calibration in a window around the pixels where the
 * current camera model puts it, and compares the marker's five points
 * (centre and corners) with where they were at the last check that agreed
 * (the baseline).  The shift of a check is the RMS over the markers seen of
 * their mean displacement: detection noise averages out over five points
 * (a few hundredths of a pixel), while a camera turned by 0.1 degree moves
 * every marker by about f·0.0017 px, 1.6 px at f = 900.  A shift above the
 * threshold is a move: the pose is fitted again (wl_camfit over the pose,
 * intrinsics and distortion kept) to the markers seen now, which keeps the
 * tank frame that the floor markers define.
 *
 * The first check compares the markers with the calibration's model
 * itself, allowing for the calibration's own residual: a camera moved
 * between calibrating and filming is registered there.
 *
 * Cost: finding tags is the expensive part, so a check does it only when
 * it must.  At the baseline a small patch of each marker is kept; a routine
 * check estimates each patch's translation in the new frame by Lucas-Kanade
 * (inverse compositional, with an intensity offset; Baker & Matthews 2004),
 * a few thousand pixels per marker.  Only when that shows a move, or too
 * few patches match (a robot over a marker, a move larger than a patch
 * can follow), are the tags detected and the pose registered.
 */
#define _POSIX_C_SOURCE 200809L
#include "track/watch.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "core/afile.h"
#include "core/angle.h"
#include "core/jsonio.h"
#include "core/linalg.h"
#include "decode/decode.h"
#include "formats/rawside.h"
#include "track/track.h"

#define MAX_MARKERS 64
#define MAX_HITS 16
#define TPL_MAX 64 /* patch side, px */
#define TPL_MIN 16
#define TPL_RESID 0.25 /* patch residual / patch contrast above this: no match (our choice) */

typedef struct {
	long id;
	int n;             /* points: centre first, then the corners found in CAL.json */
	int corner[5];     /* -1 for the centre, else the corner index 0..3 */
	double xyz[5][3];  /* tank positions */
	double base[5][2]; /* baseline pixels (calibration orientation) */
	int has_base;
	double obs[5][2]; /* this check's pixels */
	int seen;
	/* the baseline patch (coded pixels): side tp at (tx, ty), its
	 * gradients and the inverse of its Gauss-Newton matrix */
	int tp, tx, ty, has_tpl;
	float *tpl, *gx, *gy;
	double Hi[9];
} marker;

struct wl_watch {
	wl_watch_opts o;
	wl_calib cal; /* cal.cam is the current camera */
	int w, h, rot;
	wl_tagdet *det;
	int n;
	marker m[MAX_MARKERS];
	double next_t;
	int checks, first_markers;
	double last_still_t;
	int n_moves;
	wl_camera_move moves[WL_WATCH_MAX_MOVES];
	double suspect_from, suspect_to; /* NaN: none; to NaN: still suspect */
	int suspect_open;
	wl_tagdet_hit hits[MAX_HITS];
	float *tpl_mem; /* MAX_MARKERS x 3 planes of TPL_MAX² */
	int tag_checks; /* checks that detected tags */
	double cpu_s;   /* thread CPU time spent in the watch */
};

static double thread_cpu_s(void)
{
	struct timespec ts;
	if (clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts) != 0)
		return 0;
	return ts.tv_sec + 1e-9 * ts.tv_nsec;
}

double wl_watch_cpu_s(const wl_watch *w)
{
	return w ? w->cpu_s : 0;
}

void wl_watch_opts_init(wl_watch_opts *o)
{
	memset(o, 0, sizeof *o);
	o->enabled = 1;
	o->period_s = 0.5;
	o->threshold_px = 0.5;
	o->min_markers = 3;
	snprintf(o->family, sizeof o->family, "tag36h11");
}

/* calibration pixels <-> coded pixels */
static void to_coded(const wl_watch *w, double u, double v, double *uc, double *vc)
{
	if (w->cal.displayed && w->rot)
		wl_orient_to_coded(w->rot, w->w, w->h, u, v, uc, vc);
	else {
		*uc = u;
		*vc = v;
	}
}

static void to_cal(const wl_watch *w, double u, double v, double *ud, double *vd)
{
	if (w->cal.displayed && w->rot)
		wl_orient_to_displayed(w->rot, w->w, w->h, u, v, ud, vd);
	else {
		*ud = u;
		*vd = v;
	}
}

/* The markers of the calibration: "<id>" with its "<id>.c<k>" corners. */
static void collect_markers(wl_watch *w)
{
	const wl_calib *c = &w->cal;
	for (int i = 0; i < c->n_points && w->n < MAX_MARKERS; i++) {
		const wl_calib_point *p = &c->points[i];
		char *end;
		long id = strtol(p->id, &end, 10);
		marker *m;
		if (!p->used || end == p->id || *end || id < 0)
			continue;
		m = &w->m[w->n];
		{
			float *t = m->tpl, *gx = m->gx, *gy = m->gy;
			memset(m, 0, sizeof *m);
			m->tpl = t;
			m->gx = gx;
			m->gy = gy;
		}
		m->id = id;
		m->corner[0] = -1;
		m->xyz[0][0] = p->x_m;
		m->xyz[0][1] = p->y_m;
		m->xyz[0][2] = p->z_m;
		m->n = 1;
		for (int k = 0; k < 4; k++) {
			char name[48];
			snprintf(name, sizeof name, "%ld.c%d", id, k);
			for (int j = 0; j < c->n_points; j++)
				if (c->points[j].used && strcmp(c->points[j].id, name) == 0) {
					m->corner[m->n] = k;
					m->xyz[m->n][0] = c->points[j].x_m;
					m->xyz[m->n][1] = c->points[j].y_m;
					m->xyz[m->n][2] = c->points[j].z_m;
					m->n++;
					break;
				}
		}
		w->n++;
	}
}

wl_status wl_watch_create(const wl_watch_opts *o, const wl_calib *cal, int width_px, int height_px,
                          int rotation_deg, wl_watch **out, wl_err *err)
{
	wl_watch *w;
	wl_status st;
	*out = NULL;
	if (!(o->period_s > 0) || !(o->threshold_px > 0) || o->min_markers < 2)
		return wl_err_set(err, WL_EINVAL,
		                  "camera watch: the period and the threshold must be > 0 and at least 2 "
		                  "markers are needed to register the pose");
	double t0 = thread_cpu_s();
	if (!(w = calloc(1, sizeof *w)) ||
	    !(w->tpl_mem = malloc(sizeof(float) * 3 * TPL_MAX * TPL_MAX * MAX_MARKERS))) {
		free(w);
		return wl_err_set(err, WL_ENOMEM, "out of memory for the camera watch");
	}
	for (int i = 0; i < MAX_MARKERS; i++) {
		w->m[i].tpl = w->tpl_mem + (size_t)3 * TPL_MAX * TPL_MAX * (size_t)i;
		w->m[i].gx = w->m[i].tpl + TPL_MAX * TPL_MAX;
		w->m[i].gy = w->m[i].gx + TPL_MAX * TPL_MAX;
	}
	w->o = *o;
	w->cal = *cal;
	w->w = width_px;
	w->h = height_px;
	w->rot = rotation_deg;
	w->last_still_t = -1;
	w->suspect_from = w->suspect_to = NAN;
	collect_markers(w);
	/* without markers (a calibration from --points) there is nothing to
	 * watch: the sidecar and the run's summary say so (markers 0) */
	if (w->n > 0 && (st = wl_tagdet_create(o->family, 0, &w->det, err)) != WL_OK) {
		wl_watch_destroy(w);
		return st;
	}
	w->cpu_s = thread_cpu_s() - t0;
	*out = w;
	return WL_OK;
}

void wl_watch_destroy(wl_watch *w)
{
	if (!w)
		return;
	wl_tagdet_destroy(w->det);
	free(w->tpl_mem);
	free(w);
}

int wl_watch_due(const wl_watch *w, double t_s)
{
	return w && w->n > 0 && t_s + 1e-9 >= w->next_t;
}

const wl_camera *wl_watch_camera(const wl_watch *w)
{
	return &w->cal.cam;
}

int wl_watch_checks(const wl_watch *w)
{
	return w ? w->checks : 0;
}

int wl_watch_markers(const wl_watch *w)
{
	return w ? w->n : 0;
}

int wl_watch_moves(const wl_watch *w, const wl_camera_move **moves, double *suspect_from_t_s)
{
	*moves = w->moves;
	*suspect_from_t_s = w->suspect_from;
	return w->n_moves;
}

/* Looks for marker m around its model position; fills m->obs, m->seen. */
static void find_marker(wl_watch *w, marker *m, const uint8_t *luma, int stride)
{
	double u[5], v[5], x0 = INFINITY, y0 = INFINITY, x1 = -INFINITY, y1 = -INFINITY, side, margin;
	int win[4], nh;
	m->seen = 0;
	for (int k = 0; k < m->n; k++) {
		double uu, vv;
		if (!wl_camera_project_water(&w->cal.cam, m->xyz[k], &uu, &vv))
			return;
		to_coded(w, uu, vv, &u[k], &v[k]);
		x0 = fmin(x0, u[k]);
		x1 = fmax(x1, u[k]);
		y0 = fmin(y0, v[k]);
		y1 = fmax(y1, v[k]);
	}
	side = m->n > 1 ? fmax(x1 - x0, y1 - y0) : 40;
	/* the white border (a quarter of the side) and room for a move of up
	 * to half a side */
	margin = 0.75 * side + 8;
	win[0] = (int)fmax(0, floor(x0 - margin));
	win[1] = (int)fmax(0, floor(y0 - margin));
	win[2] = (int)fmin(w->w, ceil(x1 + margin)) - win[0];
	win[3] = (int)fmin(w->h, ceil(y1 + margin)) - win[1];
	if (win[2] < 16 || win[3] < 16)
		return;
	wl_tagdet_set(w->det, side >= 48 ? 2.0f : 1.0f, 0.0f, 0.25);
	nh = wl_tagdet_detect(w->det, luma, stride, win[0], win[1], win[2], win[3], w->hits, MAX_HITS);
	for (int i = 0; i < nh; i++) {
		const wl_tagdet_hit *hit = &w->hits[i];
		if (hit->id != m->id || hit->hamming != 0 || hit->margin < 20)
			continue;
		for (int k = 0; k < m->n; k++) {
			const double *p = m->corner[k] < 0 ? hit->c : hit->p[m->corner[k]];
			to_cal(w, p[0], p[1], &m->obs[k][0], &m->obs[k][1]);
		}
		m->seen = 1;
		return;
	}
}

/* Mean displacement of marker m's points: from the baseline, or (model)
 * from the current camera's projection. */
static int displacement(const wl_watch *w, const marker *m, int model, double d[2])
{
	d[0] = d[1] = 0;
	for (int k = 0; k < m->n; k++) {
		double u, v;
		if (model) {
			if (!wl_camera_project_water(&w->cal.cam, m->xyz[k], &u, &v))
				return 0;
		} else {
			u = m->base[k][0];
			v = m->base[k][1];
		}
		d[0] += (m->obs[k][0] - u) / m->n;
		d[1] += (m->obs[k][1] - v) / m->n;
	}
	return 1;
}

static double turn_deg(const double A[9], const double B[9])
{
	double tr = 0;
	for (int i = 0; i < 3; i++)
		for (int k = 0; k < 3; k++)
			tr += B[3 * i + k] * A[3 * i + k]; /* trace(B Aᵀ) */
	return acos(fmax(-1, fmin(1, (tr - 1) / 2))) / WL_DEG;
}

/* Fits the pose to the markers seen now (intrinsics kept).  Returns the
 * RMS, or a negative value. */
static double reregister(wl_watch *w)
{
	double xyz[3 * 5 * MAX_MARKERS], uv[2 * 5 * MAX_MARKERS], rms;
	wl_camfit_opts fo;
	wl_camera c = w->cal.cam;
	int n = 0;
	for (int i = 0; i < w->n; i++) {
		const marker *m = &w->m[i];
		if (!m->seen)
			continue;
		for (int k = 0; k < m->n; k++, n++) {
			memcpy(xyz + 3 * n, m->xyz[k], sizeof m->xyz[k]);
			uv[2 * n] = m->obs[k][0];
			uv[2 * n + 1] = m->obs[k][1];
		}
	}
	memset(&fo, 0, sizeof fo);
	fo.free = WL_CP_POSE;
	rms = wl_camfit(&c, xyz, uv, NULL, n, &fo, NULL);
	if (rms >= 0)
		w->cal.cam = c;
	return rms;
}

/* ---- patches: Lucas-Kanade translation (Baker & Matthews 2004) ---- */

/* Keeps the patch of marker m (seen now, centre in m->obs[0]) from the
 * frame: side ~0.8 of the tag (inside its border, full of edges), its
 * gradients and the inverse Gauss-Newton matrix of (dx, dy, offset). */
static void keep_patch(wl_watch *w, marker *m, const uint8_t *luma, int stride)
{
	double cu, cv, side = 0, H[9] = {0};
	int tp;
	m->has_tpl = 0;
	to_coded(w, m->obs[0][0], m->obs[0][1], &cu, &cv);
	for (int k = 1; k < m->n; k++)
		side = fmax(side, 1.2 * hypot(m->obs[k][0] - m->obs[0][0], m->obs[k][1] - m->obs[0][1]));
	tp = (int)fmin(TPL_MAX, fmax(TPL_MIN, 0.8 * side)) & ~1;
	m->tp = tp;
	m->tx = (int)lround(cu) - tp / 2;
	m->ty = (int)lround(cv) - tp / 2;
	if (m->tx < 1 || m->ty < 1 || m->tx + tp + 1 >= w->w || m->ty + tp + 1 >= w->h)
		return;
	for (int y = 0; y < tp; y++)
		for (int x = 0; x < tp; x++) {
			const uint8_t *p = luma + (size_t)(m->ty + y) * stride + (m->tx + x);
			int i = y * tp + x;
			m->tpl[i] = p[0];
			m->gx[i] = 0.5f * ((float)p[1] - (float)p[-1]);
			m->gy[i] = 0.5f * ((float)p[stride] - (float)p[-stride]);
			H[0] += m->gx[i] * m->gx[i];
			H[1] += m->gx[i] * m->gy[i];
			H[2] += m->gx[i];
			H[4] += m->gy[i] * m->gy[i];
			H[5] += m->gy[i];
		}
	H[3] = H[1];
	H[6] = H[2];
	H[7] = H[5];
	H[8] = (double)tp * tp;
	m->has_tpl = wl_inv3(H, m->Hi);
}

/* The patch's translation (coded px) in the frame; 0 when it does not match
 * (occluded, or moved further than the patch can follow). */
static int track_patch(const wl_watch *w, const marker *m, const uint8_t *luma, int stride, double d[2])
{
	double dx = 0, dy = 0, off = 0, var = 0, mean = 0, e2 = 0;
	int tp = m->tp, n = tp * tp;
	for (int i = 0; i < n; i++)
		mean += m->tpl[i] / n;
	for (int i = 0; i < n; i++)
		var += (m->tpl[i] - mean) * (m->tpl[i] - mean) / n;
	for (int it = 0; it < 20; it++) {
		double b[3] = {0, 0, 0}, step[3];
		int ix = (int)floor(dx), iy = (int)floor(dy);
		double fx = dx - ix, fy = dy - iy;
		if (m->tx + ix < 0 || m->ty + iy < 0 || m->tx + ix + tp + 1 >= w->w ||
		    m->ty + iy + tp + 1 >= w->h || fabs(dx) > tp / 3.0 || fabs(dy) > tp / 3.0)
			return 0;
		e2 = 0;
		for (int y = 0; y < tp; y++) {
			const uint8_t *r0 = luma + (size_t)(m->ty + iy + y) * stride + (m->tx + ix),
			              *r1 = r0 + stride;
			for (int x = 0; x < tp; x++) {
				int i = y * tp + x;
				double I = (1 - fy) * ((1 - fx) * r0[x] + fx * r0[x + 1]) +
				           fy * ((1 - fx) * r1[x] + fx * r1[x + 1]);
				double e = I - m->tpl[i] + off;
				b[0] += m->gx[i] * e;
				b[1] += m->gy[i] * e;
				b[2] += e;
				e2 += e * e;
			}
		}
		/* Gauss-Newton on r = I(x + d) - T(x) + off with the patch's own
		 * gradients (Baker & Matthews' inverse compositional form for a
		 * translation): step = -H⁻¹ Σ [gx gy 1]ᵀ r */
		wl_mul3v(m->Hi, b, step);
		dx -= step[0];
		dy -= step[1];
		off -= step[2];
		if (fabs(step[0]) + fabs(step[1]) < 1e-3)
			break;
	}
	d[0] = dx;
	d[1] = dy;
	return var > 0 && sqrt(e2 / n / var) < TPL_RESID;
}

static void set_baseline(wl_watch *w, const uint8_t *luma, int stride)
{
	for (int i = 0; i < w->n; i++) {
		marker *m = &w->m[i];
		m->has_base = m->seen;
		if (m->seen) {
			memcpy(m->base, m->obs, sizeof m->obs);
			keep_patch(w, m, luma, stride);
		} else {
			m->has_tpl = 0;
		}
	}
}

/* A routine check by the patches: the RMS translation over the patches
 * that match, or -1 when fewer than half of them (and fewer than 2) do. */
static double patch_shift(const wl_watch *w, const uint8_t *luma, int stride)
{
	double s2 = 0;
	int have = 0, ok = 0;
	for (int i = 0; i < w->n; i++) {
		const marker *m = &w->m[i];
		double d[2];
		if (!m->has_tpl)
			continue;
		have++;
		if (!track_patch(w, m, luma, stride, d))
			continue;
		s2 += d[0] * d[0] + d[1] * d[1];
		ok++;
	}
	if (ok < 2 || 2 * ok < have)
		return -1;
	return sqrt(s2 / ok);
}

static void record_move(wl_watch *w, const uint8_t *luma, int stride, double t_s, int64_t frame, double shift,
                        int seen, int *moved)
{
	wl_camera_move *mv;
	wl_camera old = w->cal.cam;
	double C0[3], C1[3], rms = NAN;
	int ok = seen >= w->o.min_markers && (rms = reregister(w)) >= 0;
	if (!ok && w->suspect_open)
		return; /* still moved, still too few markers: already recorded */
	mv = w->n_moves < WL_WATCH_MAX_MOVES ? &w->moves[w->n_moves++] : NULL;
	wl_camera_position(&old, C0);
	wl_camera_position(&w->cal.cam, C1);
	if (mv) {
		mv->t_s = t_s;
		mv->frame = frame;
		mv->last_still_t_s = w->last_still_t;
		mv->shift_px = shift;
		mv->markers = seen;
		mv->reregistered = ok;
		mv->rms_px = ok ? rms : NAN;
		mv->turn_deg = ok ? turn_deg(old.R, w->cal.cam.R) : NAN;
		mv->centre_shift_mm = ok ? 1000 * sqrt(pow(C1[0] - C0[0], 2) + pow(C1[1] - C0[1], 2) +
		                                       pow(C1[2] - C0[2], 2))
		                         : NAN;
	}
	if (ok) {
		set_baseline(w, luma, stride);
		*moved = 1;
		if (w->suspect_open) {
			w->suspect_to = t_s;
			w->suspect_open = 0;
		}
		wl_diag_warn(w->o.diag, "track",
		             "the camera moved between %.2f s and %.2f s (frame %lld): the floor markers "
		             "shifted by %.1f px; the pose was registered again from %d markers (turned %.2f "
		             "deg, centre moved %.1f mm, RMS %.2f px); positions in between may be off",
		             w->last_still_t < 0 ? 0 : w->last_still_t, t_s, (long long)frame, shift, seen,
		             mv ? mv->turn_deg : NAN, mv ? mv->centre_shift_mm : NAN, rms);
	} else if (!w->suspect_open) {
		w->suspect_open = 1;
		w->suspect_from = w->last_still_t < 0 ? 0 : w->last_still_t;
		w->suspect_to = NAN;
		wl_diag_warn(w->o.diag, "track",
		             "the camera moved between %.2f s and %.2f s (frame %lld): the floor markers "
		             "shifted by %.1f px, but only %d are in view (%d needed to register the pose "
		             "again): positions from %.2f s on are suspect; keep the floor markers in view",
		             w->suspect_from, t_s, (long long)frame, shift, seen, w->o.min_markers,
		             w->suspect_from);
	}
}

static wl_status check(wl_watch *w, const uint8_t *luma, int stride, double t_s, int64_t frame, int *moved);

wl_status wl_watch_frame(wl_watch *w, const uint8_t *luma, int stride, double t_s, int64_t frame, int *moved,
                         wl_err *err)
{
	double t0;
	wl_status st;
	(void)err;
	*moved = 0;
	if (!w || w->n == 0 || !wl_watch_due(w, t_s))
		return WL_OK;
	t0 = thread_cpu_s();
	st = check(w, luma, stride, t_s, frame, moved);
	w->cpu_s += thread_cpu_s() - t0;
	return st;
}

static wl_status check(wl_watch *w, const uint8_t *luma, int stride, double t_s, int64_t frame, int *moved)
{
	double s2 = 0, shift;
	int seen = 0, common = 0, first;
	w->next_t = t_s + w->o.period_s;
	first = w->checks++ == 0;
	if (!first && !w->suspect_open) {
		/* routine: the patches alone, when they can tell */
		double ps = patch_shift(w, luma, stride);
		if (ps >= 0 && ps <= w->o.threshold_px) {
			w->last_still_t = t_s;
			return WL_OK;
		}
	}
	w->tag_checks++;
	for (int i = 0; i < w->n; i++) {
		marker *m = &w->m[i];
		double d[2];
		find_marker(w, m, luma, stride);
		if (!m->seen)
			continue;
		seen++;
		if (!first && !m->has_base)
			continue;
		if (!displacement(w, m, first, d))
			continue;
		s2 += d[0] * d[0] + d[1] * d[1];
		common++;
	}
	if (first)
		w->first_markers = seen;
	if (common < 2) /* cannot judge: wait for the next check */
		return WL_OK;
	shift = sqrt(s2 / common);
	/* the first check is against the model: allow for its own residual */
	if (shift > (first ? fmax(w->o.threshold_px, 3 * (isfinite(w->cal.rms_px) ? w->cal.rms_px : 0))
	                   : w->o.threshold_px))
		record_move(w, luma, stride, t_s, frame, shift, seen, moved);
	else if (!w->suspect_open) {
		/* still: markers seen for the first time join the baseline, and
		 * every marker seen gets a fresh patch */
		for (int i = 0; i < w->n; i++) {
			marker *m = &w->m[i];
			if (!m->seen)
				continue;
			if (first || !m->has_base) {
				memcpy(m->base, m->obs, sizeof m->obs);
				m->has_base = 1;
			}
			keep_patch(w, m, luma, stride);
		}
	}
	if (!*moved && !w->suspect_open)
		w->last_still_t = t_s;
	return WL_OK;
}

/* ---- the RAW sidecar ---- */

int wl_watch_sidecar_path(const char *raw_csv_path, char *buf, size_t cap)
{
	return wl_rawside_path(raw_csv_path, buf, cap);
}

wl_status wl_watch_sidecar_check(const char *raw_csv_path, wl_err *err)
{
	return wl_rawside_check(raw_csv_path, err);
}

wl_status wl_watch_stage_sidecar(const wl_watch *w, const char *raw_csv_path, wl_afile **out, wl_err *err)
{
	wl_rawside *s = malloc(sizeof *s);
	wl_status st;
	*out = NULL;
	if (!s)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the RAW sidecar");
	wl_rawside_init(s);
	if (w) {
		s->enabled = 1;
		s->period_s = w->o.period_s;
		s->threshold_px = w->o.threshold_px;
		s->min_markers = w->o.min_markers;
		s->markers = w->n;
		s->markers_in_view = w->first_markers;
		s->checks = w->checks;
		s->tag_checks = w->tag_checks;
		s->n_moves = w->n_moves < WL_RAWSIDE_MAX_MOVES ? w->n_moves : WL_RAWSIDE_MAX_MOVES;
		for (int i = 0; i < s->n_moves; i++) {
			const wl_camera_move *mv = &w->moves[i];
			wl_rawside_move *o = &s->moves[i];
			o->t_s = mv->t_s;
			o->frame = (long long)mv->frame;
			o->last_still_t_s = mv->last_still_t_s >= 0 ? mv->last_still_t_s : NAN;
			o->shift_px = mv->shift_px;
			o->markers = mv->markers;
			o->reregistered = mv->reregistered;
			o->rms_px = mv->rms_px;
			o->turn_deg = mv->turn_deg;
			o->centre_shift_mm = mv->centre_shift_mm;
		}
		s->suspect_from_t_s = w->suspect_from;
		s->suspect_to_t_s = w->suspect_to;
	}
	st = wl_rawside_stage(raw_csv_path, s, out, err);
	free(s);
	return st;
}

wl_status wl_watch_write_sidecar(const wl_watch *w, const char *raw_csv_path, wl_err *err)
{
	wl_afile *af;
	wl_status st = wl_watch_stage_sidecar(w, raw_csv_path, &af, err);
	return st != WL_OK ? st : wl_afile_commit(af, err);
}
