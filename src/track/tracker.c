/*
 * tracker.c: the per-frame loop of the tracker (track.h): which robots to
 * search where, the tag and colour back ends, and pixels -> tank poses.
 *
 * Search: a robot seen in the last frames is searched in a window around
 * its predicted pixel position (constant velocity); the window grows with
 * speed and with each miss.  After `lost_after` misses the robot is lost and
 * the whole frame is searched every other frame for lost_fast_s seconds,
 * then every rescan_s seconds, which is also how new robots are found.
 *
 * Poses: the tag's four refined corners are mapped through the camera model
 * (lens distortion removed on the points) onto the robot's marker plane;
 * the centre is where the diagonals cross on that plane (the projective
 * centre of the square), the heading is the direction of the tag's "up"
 * as printed (from the midpoint of its bottom edge to the midpoint of its
 * top edge: the tag is mounted top toward the robot's front) in the tank
 * frame, plus the robot's mounting offset.
 */
#include "track/track.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/angle.h"
#include "decode/decode.h"

#define MAX_HITS 256
#define MAX_BLOBS 64
#define LOST_FAST_S 5.0 /* seconds of frequent full-frame search after a loss */

typedef struct {
	wl_robot_spec spec;
	int listed;     /* appears in the output from now on */
	int seen;       /* found at least once */
	int found;      /* found in the current frame */
	int misses;     /* consecutive frames not found */
	double u, v;    /* last pixel position (coded) */
	double vu, vv;  /* pixel velocity, px/s */
	double t_last;  /* time last found */
	double size_px; /* tag side or cap span, px */
	double ax, ay;  /* single cap: where the last motion heading was taken */
	double motion_heading;
	int has_motion;
	wl_track_obs cur; /* this frame's observation while found */
} robot;

struct wl_tracker {
	wl_track_opts o;
	wl_calib cal;
	int w, h, rot;
	double plane_default_m;
	wl_tagdet *det;
	wl_blobber *blob;
	int n;
	robot r[WL_TRACK_MAX_ROBOTS];
	wl_track_obs obs[WL_TRACK_MAX_ROBOTS];
	int frames_since_full;
	double t_last_full, t_prev;
	int any_frame;
	wl_track_stats st;
	wl_tagdet_hit hits[MAX_HITS];
	wl_blob blobs[MAX_BLOBS];
};

int wl_tracker_pixel_to_plane(const wl_tracker *tr, double u, double v, double z_m, double *x_m, double *y_m)
{
	if (tr->cal.displayed && tr->rot != 0)
		wl_orient_to_displayed(tr->rot, tr->w, tr->h, u, v, &u, &v);
	return wl_calib_pixel_to_plane(&tr->cal, u, v, z_m, x_m, y_m);
}

static robot *add_robot(wl_tracker *tr, const wl_robot_spec *spec)
{
	robot *r;
	if (tr->n >= WL_TRACK_MAX_ROBOTS)
		return NULL;
	r = &tr->r[tr->n++];
	memset(r, 0, sizeof *r);
	r->spec = *spec;
	return r;
}

/* A tag the calibration used as a floor marker is part of the tank, not a
 * robot: it is never added unless the user lists it (--ids, ROBOTS.csv). */
static int is_floor_marker(const wl_tracker *tr, int id)
{
	char name[16];
	snprintf(name, sizeof name, "%d", id);
	for (int i = 0; i < tr->cal.n_points; i++)
		if (strcmp(tr->cal.points[i].id, name) == 0)
			return 1;
	return 0;
}

static robot *robot_by_id(wl_tracker *tr, int id, int create)
{
	wl_robot_spec spec;
	for (int i = 0; i < tr->n; i++)
		if (tr->r[i].spec.id == id)
			return &tr->r[i];
	if (!create || tr->o.restrict_ids || is_floor_marker(tr, id))
		return NULL;
	memset(&spec, 0, sizeof spec);
	spec.id = id;
	spec.plane_height_m = NAN;
	spec.body_diameter_m = NAN;
	spec.tag_size_m = NAN;
	if (tr->n >= WL_TRACK_MAX_ROBOTS) {
		if (tr->st.over_limit++ == 0)
			tr->st.first_over_limit_id = id;
		return NULL;
	}
	return add_robot(tr, &spec);
}

wl_status wl_tracker_create(const wl_track_opts *opts, const wl_calib *cal, const char *cal_path,
                            int width_px, int height_px, int rotation_deg, wl_tracker **out, wl_err *err)
{
	wl_tracker *tr;
	wl_status st;
	int cw = width_px, ch = height_px;
	*out = NULL;
	if (cal->displayed) {
		wl_orient_displayed_size(rotation_deg, width_px, height_px, &cw, &ch);
		if (cal->rotation_deg != rotation_deg)
			return wl_err_set(err, WL_ECALIB,
			                  "%s: calibrated in displayed pixels of a clip turned by %d "
			                  "degrees, but this clip "
			                  "is turned by %d degrees: calibrate this clip's orientation",
			                  cal_path, cal->rotation_deg, rotation_deg);
	}
	if ((st = wl_calib_check_clip(cal, cal_path, cw, ch, cal->displayed, err)) != WL_OK)
		return st;
	if (opts->mode == WL_TRACK_COLOUR) {
		if (opts->n_robots == 0)
			return wl_err_set(
			        err, WL_EINVAL,
			        "colour mode needs each robot's colours: give --robots ROBOTS.csv with "
			        "front_hsv_lo,front_hsv_hi (and back_hsv_lo,back_hsv_hi)");
		for (int i = 0; i < opts->n_robots; i++)
			if (!opts->robots[i].front.set)
				return wl_err_set(
				        err, WL_EINVAL,
				        "robot %d has no front_hsv_lo/front_hsv_hi: colour mode needs them",
				        opts->robots[i].id);
	}
	if (!(tr = calloc(1, sizeof *tr)))
		return wl_err_set(err, WL_ENOMEM, "out of memory creating the tracker");
	tr->o = *opts;
	tr->cal = *cal;
	tr->w = width_px;
	tr->h = height_px;
	tr->rot = rotation_deg;
	tr->plane_default_m = isnan(opts->plane_height_m) ? cal->plane_height_m : opts->plane_height_m;
	if (opts->mode == WL_TRACK_TAG) {
		int bits = opts->max_hamming > 0 ? opts->max_hamming : 1;
		if ((st = wl_tagdet_create(opts->family, bits, &tr->det, err)) != WL_OK)
			goto fail;
	} else if ((st = wl_blobber_create(&tr->blob, err)) != WL_OK) {
		goto fail;
	}
	/* robots given up front are listed from the first frame (lost until found) */
	for (int i = 0; i < opts->n_robots; i++)
		add_robot(tr, &opts->robots[i])->listed = 1;
	*out = tr;
	return WL_OK;
fail:
	wl_tracker_destroy(tr);
	return st;
}

void wl_tracker_destroy(wl_tracker *tr)
{
	if (!tr)
		return;
	wl_tagdet_destroy(tr->det);
	wl_blobber_destroy(tr->blob);
	free(tr);
}

void wl_tracker_set_camera(wl_tracker *tr, const wl_camera *cam)
{
	tr->cal.cam = *cam;
}

const wl_track_stats *wl_tracker_stats(const wl_tracker *tr)
{
	return &tr->st;
}

static double plane_of(const wl_tracker *tr, const robot *r)
{
	return isnan(r->spec.plane_height_m) ? tr->plane_default_m : r->spec.plane_height_m;
}

/* the window to search for r at time t, grown by `extra` pixels and
 * clamped to the frame and to the region `roi` (NULL or w == 0: all) */
static void window_at(const wl_tracker *tr, const robot *r, double t, double extra, const int *roi,
                      int win[4])
{
	double dt = t - r->t_last, dtf = t - tr->t_prev;
	double pu = r->u + r->vu * dt, pv = r->v + r->vv * dt;
	double speed = sqrt(r->vu * r->vu + r->vv * r->vv) * (dtf > 0 ? dtf : 0.04);
	/* 0.9 side: a tag turned 45 degrees with its white border, plus the
	 * prediction's error (twice a frame's motion and 8 px) */
	double half = 0.9 * r->size_px + 2.0 * speed + 0.75 * r->size_px * r->misses + 8.0 + extra;
	int x0 = (int)floor(pu - half), y0 = (int)floor(pv - half);
	int x1 = (int)ceil(pu + half), y1 = (int)ceil(pv + half);
	int rx0 = 0, ry0 = 0, rx1 = tr->w, ry1 = tr->h;
	if (roi && roi[2] > 0) {
		rx0 = roi[0];
		ry0 = roi[1];
		rx1 = roi[0] + roi[2];
		ry1 = roi[1] + roi[3];
	}
	if (x0 < rx0)
		x0 = rx0;
	if (y0 < ry0)
		y0 = ry0;
	if (x1 > rx1)
		x1 = rx1;
	if (y1 > ry1)
		y1 = ry1;
	win[0] = x0;
	win[1] = y0;
	win[2] = x1 > x0 ? x1 - x0 : 0;
	win[3] = y1 > y0 ? y1 - y0 : 0;
}

/* marks r found with this frame's observation and updates the motion model */
static void found(wl_tracker *tr, robot *r, double t, double u, double v, double size_px)
{
	if (r->seen && r->misses < tr->o.lost_after && t > r->t_last) {
		double a = 0.6; /* light smoothing of the pixel velocity */
		r->vu = a * (u - r->u) / (t - r->t_last) + (1 - a) * r->vu;
		r->vv = a * (v - r->v) / (t - r->t_last) + (1 - a) * r->vv;
	} else {
		r->vu = r->vv = 0;
	}
	r->u = u;
	r->v = v;
	r->t_last = t;
	r->size_px = size_px;
	r->seen = r->listed = r->found = 1;
	r->misses = 0;
}

/* ---- tag back end ---- */

/* decimation inside a window: 2 halves the cost and still finds tags of
 * 19 px and more (test_track measures it); 32 px leaves a margin for blur */
static float window_decimate(const wl_tracker *tr, const robot *r)
{
	if (tr->o.window_decimate >= 1.0f)
		return tr->o.window_decimate;
	return r->size_px >= 32.0 ? 2.0f : 1.0f;
}

static int hit_ok(wl_tracker *tr, const wl_tagdet_hit *h)
{
	double e = tr->o.edge_px;
	if (h->hamming > tr->o.max_hamming ||
	    h->margin < (h->hamming == 0 ? tr->o.min_margin : tr->o.min_margin_h1)) {
		tr->st.rejected_quality++;
		return 0;
	}
	for (int k = 0; k < 4; k++)
		if (h->p[k][0] < e || h->p[k][1] < e || h->p[k][0] > tr->w - 1 - e ||
		    h->p[k][1] > tr->h - 1 - e) {
			tr->st.rejected_edge++;
			return 0;
		}
	return 1;
}

static int tag_pose(const wl_tracker *tr, const robot *r, const wl_tagdet_hit *h, wl_track_obs *o)
{
	double P[4][2], z = plane_of(tr, r), d1x, d1y, d2x, d2y, den, s, ax, ay, side = 0;
	for (int k = 0; k < 4; k++) {
		if (!wl_tracker_pixel_to_plane(tr, h->p[k][0], h->p[k][1], z, &P[k][0], &P[k][1]))
			return 0;
		side += hypot(h->p[(k + 1) % 4][0] - h->p[k][0], h->p[(k + 1) % 4][1] - h->p[k][1]);
	}
	/* diagonals P0 + s (P2 - P0) and P1 + q (P3 - P1) */
	d1x = P[2][0] - P[0][0];
	d1y = P[2][1] - P[0][1];
	d2x = P[3][0] - P[1][0];
	d2y = P[3][1] - P[1][1];
	den = d1x * d2y - d1y * d2x;
	if (fabs(den) < 1e-15)
		return 0;
	s = ((P[1][0] - P[0][0]) * d2y - (P[1][1] - P[0][1]) * d2x) / den;
	/* p0, p1 are the bottom corners, p2, p3 the top ones (tag y down) */
	ax = 0.5 * (P[2][0] + P[3][0] - P[0][0] - P[1][0]);
	ay = 0.5 * (P[2][1] + P[3][1] - P[0][1] - P[1][1]);
	o->id = r->spec.id;
	o->ok = 1;
	o->u_px = h->c[0];
	o->v_px = h->c[1];
	o->x_m = P[0][0] + s * d1x;
	o->y_m = P[0][1] + s * d1y;
	o->heading_rad = wl_wrap_pi(atan2(ay, ax) + r->spec.heading_offset_rad);
	o->margin = h->margin;
	o->size_px = side / 4.0;
	o->heading_source = WL_HS_TAG;
	return 1;
}

/* takes the accepted hits of one search: the best (by margin) per robot */
static void take_hits(wl_tracker *tr, int nh, double t)
{
	for (int i = 0; i < nh; i++) {
		const wl_tagdet_hit *h = &tr->hits[i];
		robot *r;
		wl_track_obs o;
		if (!hit_ok(tr, h) || !(r = robot_by_id(tr, h->id, 1)))
			continue;
		if (r->found && r->cur.margin >= h->margin)
			continue;
		if (!tag_pose(tr, r, h, &o))
			continue;
		r->cur = o;
		found(tr, r, t, o.u_px, o.v_px, o.size_px);
	}
}

static void detect_tags(wl_tracker *tr, const wl_track_image *img, int full)
{
	int nh;
	if (full) {
		wl_tagdet_set(tr->det, tr->o.quad_decimate, tr->o.quad_sigma, tr->o.decode_sharpening);
		nh = wl_tagdet_detect(tr->det, img->luma, img->luma_stride, 0, 0, tr->w, tr->h, tr->hits,
		                      MAX_HITS);
		tr->st.full_scans++;
		take_hits(tr, nh, img->t_s);
	}
	for (int i = 0; i < tr->n; i++) {
		robot *r = &tr->r[i];
		int win[4];
		if (r->found || !r->seen || r->misses >= tr->o.lost_after)
			continue;
		window_at(tr, r, img->t_s, 0.0, img->roi, win);
		wl_tagdet_set(tr->det, window_decimate(tr, r), tr->o.quad_sigma, tr->o.decode_sharpening);
		nh = wl_tagdet_detect(tr->det, img->luma, img->luma_stride, win[0], win[1], win[2], win[3],
		                      tr->hits, MAX_HITS);
		tr->st.window_scans++;
		take_hits(tr, nh, img->t_s);
	}
}

/* ---- colour back end ---- */

/* the blob of range hr nearest to (pu, pv) (or the largest when pu < 0) */
static int best_blob(wl_tracker *tr, const wl_track_image *img, const int win[4], const wl_hsv_range *hr,
                     double pu, double pv, wl_blob *out)
{
	int nb = wl_blobber_find(tr->blob, img->rgb, img->rgb_stride, win[0], win[1], win[2], win[3], hr,
	                         tr->o.min_blob_px, tr->o.max_blob_px, tr->blobs, MAX_BLOBS);
	double best = -1;
	int bi = -1;
	for (int i = 0; i < nb; i++) {
		const wl_blob *b = &tr->blobs[i];
		double score;
		if (b->fill < tr->o.min_fill)
			continue;
		score = pu < 0 ? b->area_px : 1.0 / (1.0 + hypot(b->cu - pu, b->cv - pv));
		if (score > best) {
			best = score;
			bi = i;
		}
	}
	if (bi < 0)
		return 0;
	*out = tr->blobs[bi];
	return 1;
}

static void colour_robot(wl_tracker *tr, robot *r, const wl_track_image *img, int full)
{
	int win[4] = {0, 0, tr->w, tr->h};
	double pu = -1, pv = -1, z = plane_of(tr, r);
	wl_blob fb, bb;
	wl_track_obs o;
	double fx, fy, bx, by, u, v, size;
	if (!full) {
		double dt = img->t_s - r->t_last;
		window_at(tr, r, img->t_s, 0.0, img->roi, win);
		pu = r->u + r->vu * dt;
		pv = r->v + r->vv * dt;
		tr->st.window_scans++;
	}
	if (!best_blob(tr, img, win, &r->spec.front, pu, pv, &fb))
		return;
	memset(&o, 0, sizeof o);
	o.id = r->spec.id;
	o.ok = 1;
	o.margin = fb.area_px;
	size = 2.0 * sqrt(fb.area_px / WL_PI);
	if (r->spec.back.set) {
		/* the back cap nearest the front cap found */
		if (!best_blob(tr, img, win, &r->spec.back, fb.cu, fb.cv, &bb))
			return;
		if (!wl_tracker_pixel_to_plane(tr, fb.cu, fb.cv, z, &fx, &fy) ||
		    !wl_tracker_pixel_to_plane(tr, bb.cu, bb.cv, z, &bx, &by))
			return;
		if (!isnan(r->spec.body_diameter_m) &&
		    hypot(fx - bx, fy - by) > 1.5 * r->spec.body_diameter_m)
			return; /* caps of two different things */
		o.x_m = 0.5 * (fx + bx);
		o.y_m = 0.5 * (fy + by);
		o.heading_rad = wl_wrap_pi(atan2(fy - by, fx - bx) + r->spec.heading_offset_rad);
		o.heading_source = WL_HS_CAPS;
		u = 0.5 * (fb.cu + bb.cu);
		v = 0.5 * (fb.cv + bb.cv);
		o.margin += bb.area_px;
		size = hypot(fb.cu - bb.cu, fb.cv - bb.cv) + size;
	} else {
		if (!wl_tracker_pixel_to_plane(tr, fb.cu, fb.cv, z, &o.x_m, &o.y_m))
			return;
		u = fb.cu;
		v = fb.cv;
		/* heading from the direction of motion, once it moved far enough */
		if (!r->has_motion && !r->seen) {
			r->ax = o.x_m;
			r->ay = o.y_m;
			r->motion_heading = NAN;
			r->has_motion = 1;
		} else if (hypot(o.x_m - r->ax, o.y_m - r->ay) >= tr->o.motion_min_m) {
			r->motion_heading = atan2(o.y_m - r->ay, o.x_m - r->ax);
			r->ax = o.x_m;
			r->ay = o.y_m;
		}
		o.heading_rad = isnan(r->motion_heading)
		                        ? NAN
		                        : wl_wrap_pi(r->motion_heading + r->spec.heading_offset_rad);
		o.heading_source = WL_HS_MOTION;
	}
	o.u_px = u;
	o.v_px = v;
	o.size_px = 2.0 * sqrt(fb.area_px / WL_PI);
	r->cur = o;
	found(tr, r, img->t_s, u, v, size);
}

static void detect_colour(wl_tracker *tr, const wl_track_image *img, int full)
{
	if (full)
		tr->st.full_scans++;
	for (int i = 0; i < tr->n; i++) {
		robot *r = &tr->r[i];
		int use_window = r->seen && r->misses < tr->o.lost_after;
		if (!full && !use_window)
			continue;
		colour_robot(tr, r, img, !use_window);
	}
}

/* ---- the frame ---- */

static int need_full(const wl_tracker *tr, double t)
{
	int lost_recent = 0, untracked = 0;
	if (!tr->any_frame)
		return 1;
	for (int i = 0; i < tr->n; i++) {
		const robot *r = &tr->r[i];
		if (!r->seen)
			untracked = 1;
		else if (r->misses >= tr->o.lost_after) {
			untracked = 1;
			if (t - r->t_last < LOST_FAST_S)
				lost_recent = 1;
		}
	}
	if (lost_recent && tr->frames_since_full >= 2)
		return 1;
	if (t - tr->t_last_full >= tr->o.rescan_s) {
		/* with a fixed list of robots all in view, there is nothing new to find */
		if (tr->o.restrict_ids && !untracked)
			return 0;
		/* colour robots are all known: rescan only for the lost ones */
		if (tr->o.mode == WL_TRACK_COLOUR && !untracked)
			return 0;
		return 1;
	}
	return 0;
}

int wl_tracker_roi(const wl_tracker *tr, double lookahead_s, int roi[4])
{
	int x0 = tr->w, y0 = tr->h, x1 = 0, y1 = 0;
	roi[0] = roi[1] = 0;
	roi[2] = tr->w;
	roi[3] = tr->h;
	if (tr->o.mode != WL_TRACK_TAG || !tr->any_frame || tr->n == 0)
		return 1;
	/* a full-frame search may fall due before then */
	for (double dt = 0; dt <= lookahead_s + 1e-9; dt += lookahead_s > 0 ? lookahead_s / 4 : 1)
		if (need_full(tr, tr->t_prev + dt))
			return 1;
	for (int i = 0; i < tr->n; i++) {
		const robot *r = &tr->r[i];
		int win[4];
		if (!r->seen || r->misses >= tr->o.lost_after)
			return 1;
		/* the window it would get then (its motion term covers the frames
		 * in between), with room for one more miss */
		window_at(tr, r, tr->t_prev + lookahead_s, 0.75 * r->size_px, NULL, win);
		if (win[0] < x0)
			x0 = win[0];
		if (win[1] < y0)
			y0 = win[1];
		if (win[0] + win[2] > x1)
			x1 = win[0] + win[2];
		if (win[1] + win[3] > y1)
			y1 = win[1] + win[3];
	}
	if (x1 <= x0 || y1 <= y0)
		return 1;
	roi[0] = x0;
	roi[1] = y0;
	roi[2] = x1 - x0;
	roi[3] = y1 - y0;
	return 0;
}

wl_status wl_tracker_frame(wl_tracker *tr, const wl_track_image *img, const wl_track_obs **obs, int *n,
                           wl_err *err)
{
	int full, k = 0;
	if (img->width_px != tr->w || img->height_px != tr->h)
		return wl_err_set(err, WL_EDECODE, "frame %lld: size %dx%d differs from the clip's %dx%d",
		                  (long long)img->index, img->width_px, img->height_px, tr->w, tr->h);
	if (tr->o.mode == WL_TRACK_COLOUR && !img->rgb)
		return wl_err_set(err, WL_EINVAL, "frame %lld: colour mode needs RGB frames",
		                  (long long)img->index);
	/* a frame holding only part of the picture cannot be searched whole:
	 * the search waits for a full frame (the producer was asked for one) */
	full = (img->roi[2] == 0 || (img->roi[2] >= tr->w && img->roi[3] >= tr->h)) &&
	       need_full(tr, img->t_s);
	for (int i = 0; i < tr->n; i++)
		tr->r[i].found = 0;
	if (tr->o.mode == WL_TRACK_TAG)
		detect_tags(tr, img, full);
	else
		detect_colour(tr, img, full);
	if (full) {
		tr->t_last_full = img->t_s;
		tr->frames_since_full = 0;
	}
	tr->frames_since_full++;
	for (int i = 0; i < tr->n; i++) {
		robot *r = &tr->r[i];
		if (!r->found && r->seen)
			r->misses++;
		if (!r->listed)
			continue;
		if (r->found) {
			tr->obs[k] = r->cur;
		} else {
			memset(&tr->obs[k], 0, sizeof tr->obs[k]);
			tr->obs[k].id = r->spec.id;
			tr->obs[k].u_px = tr->obs[k].v_px = tr->obs[k].x_m = tr->obs[k].y_m = NAN;
			tr->obs[k].heading_rad = tr->obs[k].margin = tr->obs[k].size_px = NAN;
		}
		k++;
	}
	/* rows of a frame in id order, whatever the order robots were found in */
	for (int i = 1; i < k; i++) {
		wl_track_obs o = tr->obs[i];
		int j = i;
		for (; j > 0 && tr->obs[j - 1].id > o.id; j--)
			tr->obs[j] = tr->obs[j - 1];
		tr->obs[j] = o;
	}
	tr->any_frame = 1;
	tr->t_prev = img->t_s;
	tr->st.frames++;
	*obs = tr->obs;
	*n = k;
	return WL_OK;
}
