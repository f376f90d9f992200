/*
 * tracker.c: the per-frame loop of the tracker (track.h): which robots to
 * search where, the tag and colour back ends, holding a robot the detector
 * missed, and pixels -> tank poses.
 *
 * Search: a robot seen in the last frames is searched in a window around
 * its predicted pixel position (constant velocity); the window grows with
 * speed and with each miss (for at most GROW_MAX misses).  After
 * `lost_after` misses the robot is lost: it is still searched in a window
 * around its last position on every frame, and the whole frame is searched
 * every other frame for LOST_FAST_S seconds, then every rescan_s seconds,
 * which is also how new robots are found.  A robot is left unsearched on a
 * frame only when it is known to be out of view (never found by a
 * full-frame search, predicted outside the image, or lost longer than
 * LOST_FAST_S); the stats count every lost row as searched or out of view.
 *
 * Holding: when the detector finds nothing where a tracked robot is
 * predicted, the tag's printed pattern is aligned with the image around the
 * prediction (hold.c), or in colour mode the cap discs are fitted with the
 * glare-washed pixels counted as cap (capfit.c); a good enough match gives
 * a `held` pose with its score.  Holds are allowed for hold_max_s after the
 * last detection, which re-anchors them; held poses feed the prediction.
 *
 * Poses: the tag's four refined corners are mapped through the camera model
 * (lens distortion removed on the points) onto the robot's marker plane;
 * the centre is where the diagonals cross on that plane (the projective
 * centre of the square), the heading is the direction of the tag's "up"
 * as printed (from the midpoint of its bottom edge to the midpoint of its
 * top edge: the tag is mounted top toward the robot's front) in the tank
 * frame, plus the robot's mounting offset.  With a rolling shutter each
 * pose's time is t_s + v_px / height * readout_s (coded rows, read top to
 * bottom).
 *
 * Determinism: the result depends only on the frames and their region
 * (img->roi), never on timing.
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
#define LOST_FAST_S 5.0    /* seconds of frequent full-frame search after a loss */
#define GROW_MAX 6         /* a window grows with at most this many misses */
#define ROI_MISSES 2       /* the region asked of the producer has room for this many misses */
#define PREDICT_MAX_S 0.5  /* motion is extrapolated at most this long */
#define HOLD_SEARCH_PX 3.0 /* radius of the coarse search of a hold */
#define HOLD_GROW_PX 2.0   /* ... grown by this per frame missed before */
#define WL_MAX(a, b) ((a) > (b) ? (a) : (b))
#define READOUT_MAX_DT_S 0.1 /* readout estimate: detections at most this far apart */
/* readout estimate: the shear a tag's corners show without motion (the
 * printed pattern next to the border pulls the fitted edges), as the norm
 * of the 8 corner coordinates' displacement, px.  Measured on our
 * renderer's tag36h11 tags of about 35 px (tests/e2e/0302): up to 0.08 px */
#define READOUT_CORNER_BIAS_PX 0.1
#define TURN_MIN_MPS 0.01 /* travel slower than this has no direction */
#define HOLD_TURN_MAX (20 * WL_DEG)
#define HOLD_CONTRAST_LO 0.4 /* a held tag's contrast against the last detection's */
#define HOLD_CONTRAST_HI 2.5
#define CAP_WHOLE 0.9      /* a cap blob of less than this of its usual area is partly washed out */
#define CAP_OTHER_MAX 0.25 /* a held cap disc may hold at most this much of other colours */

typedef struct {
	wl_robot_spec spec;
	int listed;     /* appears in the output from now on */
	int seen;       /* found at least once */
	int found;      /* a pose in the current frame (detected or held) */
	int held;       /* ... and it was held */
	int searched;   /* searched in the current frame */
	int misses;     /* consecutive frames without a pose */
	double u, v;    /* last pixel position (coded) */
	double vu, vv;  /* pixel velocity, px/s */
	double t_last;  /* time of the last pose */
	double size_px; /* tag side or cap span, px (from detections) */
	/* holding in tag mode: the last pose on the marker plane and its
	 * rates, the tag's corners (in the frame of its up direction) and
	 * levels from the last detection, and the pattern model */
	double x, y, up, vx, vy, vup, vturn, t_plane;
	int has_plane;
	double t_detected;
	double L[4][2];
	int has_shape;
	double det_px[4][2];     /* the last detection's corners, for its levels */
	double det_P[4][2];      /* ... on the marker plane */
	double rs_x, rs_y, rs_t; /* the detection before (for the readout estimate) */
	int rs_have;
	double ab[2];
	int has_levels, no_model;
	wl_tagmodel *model;
	/* colour mode */
	double ax, ay; /* single cap: where the last motion heading was taken */
	double motion_heading;
	int has_motion;
	int cap_known[2]; /* front, back: colour and size measured on a whole blob */
	double cap_u[2], cap_v[2], cap_r[2], cap_rgb[2][3];
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
	double rs_yy, rs_zy, rs_zz; /* the readout estimate's normal equations */
	double rs_bz;               /* sum of |z| times the plane's metres per pixel (corner bias) */
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
	tr->st.readout_s = tr->st.readout_se_s = tr->st.readout_bias_s = NAN;
	tr->o = *opts;
	if (isnan(tr->o.readout_s)) /* the camera's, from CAL.json */
		tr->o.readout_s =
		        isfinite(cal->readout_ms) && cal->readout_ms > 0 ? cal->readout_ms / 1000.0 : 0;
	tr->st.readout_used_s = tr->o.readout_s;
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
	for (int i = 0; i < tr->n; i++)
		wl_tagmodel_destroy(tr->r[i].model);
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

/* The predicted pixel position of r at time t (motion extrapolated at most
 * PREDICT_MAX_S). */
static void predict_px(const robot *r, double t, double *pu, double *pv)
{
	double dt = t - r->t_last;
	if (dt > PREDICT_MAX_S)
		dt = PREDICT_MAX_S;
	*pu = r->u + r->vu * dt;
	*pv = r->v + r->vv * dt;
}

/* the window to search for r at time t, grown by `extra` pixels and
 * clamped to the frame and to the region `roi` (NULL or w == 0: all) */
static void window_at(const wl_tracker *tr, const robot *r, double t, double extra, const int *roi,
                      int win[4])
{
	double dtf = t - tr->t_prev, pu, pv;
	double speed = sqrt(r->vu * r->vu + r->vv * r->vv) * (dtf > 0 ? dtf : 0.04);
	int grow = r->misses < GROW_MAX ? r->misses : GROW_MAX;
	/* 0.9 side: a tag turned 45 degrees with its white border, plus the
	 * prediction's error (twice a frame's motion and 8 px) */
	double half = 0.9 * r->size_px + 2.0 * speed + 0.75 * r->size_px * grow + 8.0 + extra;
	int x0, y0, x1, y1, rx0 = 0, ry0 = 0, rx1 = tr->w, ry1 = tr->h;
	predict_px(r, t, &pu, &pv);
	x0 = (int)floor(pu - half);
	y0 = (int)floor(pv - half);
	x1 = (int)ceil(pu + half);
	y1 = (int)ceil(pv + half);
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

/* the part of the frame that holds pixels: roi, or all of it */
static void readable(const wl_tracker *tr, const wl_track_image *img, int area[4])
{
	if (img->roi[2] > 0) {
		memcpy(area, img->roi, 4 * sizeof *area);
	} else {
		area[0] = area[1] = 0;
		area[2] = tr->w;
		area[3] = tr->h;
	}
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
	if (size_px > 0)
		r->size_px = size_px;
	r->seen = r->listed = r->found = 1;
	r->misses = 0;
}

/* the pose on the marker plane and its rates (for holding) */
static void track_plane(robot *r, double t, double x, double y, double up)
{
	if (r->has_plane && t > r->t_plane && t - r->t_plane < PREDICT_MAX_S) {
		double a = 0.6, dt = t - r->t_plane, ox = r->vx, oy = r->vy;
		r->vx = a * (x - r->x) / dt + (1 - a) * r->vx;
		r->vy = a * (y - r->y) / dt + (1 - a) * r->vy;
		r->vup = a * wl_wrap_pi(up - r->up) / dt + (1 - a) * r->vup;
		/* the turn rate of the direction of travel, where there is travel */
		if (hypot(ox, oy) > TURN_MIN_MPS && hypot(r->vx, r->vy) > TURN_MIN_MPS)
			r->vturn =
			        a * wl_wrap_pi(atan2(r->vy, r->vx) - atan2(oy, ox)) / dt + (1 - a) * r->vturn;
	} else {
		r->vx = r->vy = r->vup = r->vturn = 0;
	}
	r->x = x;
	r->y = y;
	r->up = up;
	r->t_plane = t;
	r->has_plane = 1;
}

/* A robot is known to be out of view when a full-frame search never found
 * it, when it has been lost for LOST_FAST_S, or when its prediction lies
 * outside the image; it is then looked for by full-frame searches only. */
static int out_of_view(const wl_tracker *tr, const robot *r, double t)
{
	double pu, pv, m;
	if (!r->seen)
		return 1;
	if (r->misses < tr->o.lost_after)
		return 0;
	if (t - r->t_last >= LOST_FAST_S)
		return 1;
	predict_px(r, t, &pu, &pv);
	m = 0.5 * r->size_px;
	return pu < -m || pv < -m || pu > tr->w - 1 + m || pv > tr->h - 1 + m;
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

/* The pose of a detection on r's marker plane: obs, the corners on the
 * plane and the direction of the tag's up (before the mounting offset). */
static int tag_pose(const wl_tracker *tr, const robot *r, const wl_tagdet_hit *h, wl_track_obs *o,
                    double P[4][2], double *up)
{
	double z = plane_of(tr, r), d1x, d1y, d2x, d2y, den, s, ax, ay, side = 0;
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
	memset(o, 0, sizeof *o);
	o->id = r->spec.id;
	o->ok = 1;
	o->u_px = h->c[0];
	o->v_px = h->c[1];
	o->x_m = P[0][0] + s * d1x;
	o->y_m = P[0][1] + s * d1y;
	*up = atan2(ay, ax);
	o->heading_rad = wl_wrap_pi(*up + r->spec.heading_offset_rad);
	o->margin = h->margin;
	o->size_px = side / 4.0;
	o->heading_source = WL_HS_TAG;
	o->held = 0;
	o->hold_score = NAN;
	o->t_detect_s = NAN;
	return 1;
}

/* takes the accepted hits of one search: the best (by margin) per robot */
static void take_hits(wl_tracker *tr, int nh, double t)
{
	for (int i = 0; i < nh; i++) {
		const wl_tagdet_hit *h = &tr->hits[i];
		robot *r;
		wl_track_obs o;
		double P[4][2], up;
		if (!hit_ok(tr, h) || !(r = robot_by_id(tr, h->id, 1)))
			continue;
		if (r->found && !r->held && r->cur.margin >= h->margin)
			continue;
		if (!tag_pose(tr, r, h, &o, P, &up))
			continue;
		if (r->found && r->held)
			tr->st.held_rows--; /* another window found it after all */
		r->cur = o;
		r->held = 0;
		found(tr, r, t, o.u_px, o.v_px, o.size_px);
		track_plane(r, t, o.x_m, o.y_m, up);
		r->t_detected = t;
		/* the tag's corners relative to its centre, in the frame of up */
		for (int k = 0; k < 4; k++) {
			double dx = P[k][0] - o.x_m, dy = P[k][1] - o.y_m;
			r->L[k][0] = cos(up) * dx + sin(up) * dy;
			r->L[k][1] = -sin(up) * dx + cos(up) * dy;
			r->det_px[k][0] = h->p[k][0];
			r->det_px[k][1] = h->p[k][1];
			r->det_P[k][0] = P[k][0];
			r->det_P[k][1] = P[k][1];
		}
		r->has_shape = 2; /* 2: its levels are to be measured this frame */
	}
}

typedef struct {
	const wl_tracker *tr;
	double z;
} plane_ctx;

static int plane_to_px(const void *vctx, double x, double y, double *u, double *v)
{
	const plane_ctx *c = vctx;
	const wl_tracker *tr = c->tr;
	double X[3] = {x, y, c->z};
	if (!wl_camera_project_water(&tr->cal.cam, X, u, v))
		return 0;
	if (tr->cal.displayed && tr->rot != 0)
		wl_orient_to_coded(tr->rot, tr->w, tr->h, *u, *v, u, v);
	return 1;
}

/* Holds a tracked tag the detector missed: its pattern aligned with the
 * image around the predicted pose (hold.c), accepted when the match is good
 * enough, its contrast like the last detection's, and it lies where the
 * robot was predicted. */
static int hold_tag(wl_tracker *tr, robot *r, const wl_track_image *img)
{
	plane_ctx ctx = {tr, plane_of(tr, r)};
	wl_tagpose guess, p;
	wl_tagfit fit;
	wl_track_obs o;
	double dt, gu, gv, reach;
	int area[4];
	if (!(tr->o.hold_max_s > 0) || !r->has_shape || !r->has_levels || !r->model || !r->has_plane)
		return 0;
	if (img->t_s - r->t_detected > tr->o.hold_max_s)
		return 0;
	/* after misses (the tag fully hidden for a while) the prediction is
	 * older: search wider, HOLD_GROW_PX per miss */
	reach = HOLD_SEARCH_PX + HOLD_GROW_PX * (r->misses < GROW_MAX ? r->misses : GROW_MAX);
	/* the pose predicted on the plane: steady speed and turn rate (after a
	 * full occlusion of half a second a robot on a 0.4 m circle is 15 px
	 * from where a straight line would put it) */
	dt = img->t_s - r->t_plane;
	{
		double wt = r->vturn * dt;
		if (fabs(wt) < 1e-6) {
			guess.x_m = r->x + r->vx * dt;
			guess.y_m = r->y + r->vy * dt;
		} else {
			guess.x_m = r->x + (r->vx * sin(wt) - r->vy * (1 - cos(wt))) / r->vturn;
			guess.y_m = r->y + (r->vy * sin(wt) + r->vx * (1 - cos(wt))) / r->vturn;
		}
		guess.up_rad = r->up + r->vup * dt;
	}
	if (!plane_to_px(&ctx, guess.x_m, guess.y_m, &gu, &gv))
		return 0;
	readable(tr, img, area);
	tr->st.hold_tries++;
	if (!wl_tagmodel_fit(r->model, (const double(*)[2])r->L, plane_to_px, &ctx, img->luma,
	                     img->luma_stride, area, &guess, r->ab, reach, &p, &fit))
		return 0;
	/* its own code: a quarter of its dark and of its light bits read right
	 * (a flat patch reads one kind only), and the wrong ones all of one
	 * kind (an occluder's or glare's) -- another tag of the family (a robot
	 * over this one) gets about half of them wrong, both ways */
	if (fit.bits_ok_dark < WL_MAX(2, fit.bits_dark / 4) ||
	    fit.bits_ok_light < WL_MAX(2, (fit.bits_total - fit.bits_dark) / 4) ||
	    (fit.bits_wrong_dark > 1 && fit.bits_wrong_light > 1))
		return 0;
	if (fit.score < tr->o.hold_min_score || fit.contrast < HOLD_CONTRAST_LO * r->ab[1] ||
	    fit.contrast > HOLD_CONTRAST_HI * r->ab[1] ||
	    hypot(fit.u_px - gu, fit.v_px - gv) > fmax(0.35 * r->size_px, 4.0) + reach - HOLD_SEARCH_PX ||
	    fabs(wl_wrap_pi(p.up_rad - guess.up_rad)) > HOLD_TURN_MAX)
		return 0;
	memset(&o, 0, sizeof o);
	o.id = r->spec.id;
	o.ok = 1;
	o.held = 1;
	o.hold_score = fit.score;
	o.u_px = fit.u_px;
	o.v_px = fit.v_px;
	o.x_m = p.x_m;
	o.y_m = p.y_m;
	o.heading_rad = wl_wrap_pi(p.up_rad + r->spec.heading_offset_rad);
	o.margin = NAN;
	o.size_px = fit.side_px;
	o.heading_source = WL_HS_TAG;
	o.t_detect_s = NAN;
	r->cur = o;
	found(tr, r, img->t_s, o.u_px, o.v_px, 0);
	r->held = 1;
	track_plane(r, img->t_s, p.x_m, p.y_m, p.up_rad);
	tr->st.held_rows++;
	return 1;
}

/* The readout from a moving tag's shear.  Row v of the image is exposed at
 * t + v / H * readout, so a tag moving at V on its plane shows corner k
 * displaced by V (v_k - v_c) rho, rho = readout / H.  The true corners are
 * a square: C + [a -b; b a] l_k (l_k the unit square's corners, mirrored
 * when the image is).  Linear in (C, a, b) and the one global rho: each
 * detection of a moving tag adds its normal
 * equations with (C, a, b) projected out (l is centred and orthogonal, so
 * the projection is a mean and two dot products).  V comes from the
 * detection before, when it was on the previous frame.  A tag's fitted
 * corners are sheared a little without motion too (READOUT_CORNER_BIAS_PX);
 * readout_bias_s says how far that can move the estimate. */
static void readout_shear(wl_tracker *tr, robot *r, double t)
{
	static const double l0[4][2] = {{-1, 1}, {1, 1}, {1, -1}, {-1, -1}};
	double l[4][2], area = 0, vx, vy, vc = 0, y[8], z[8], zn = 0, side_m = 0, side_px = 0;
	int have = r->rs_have && t > r->rs_t && t - r->rs_t < READOUT_MAX_DT_S;
	double px = 0, py = 0;
	for (int k = 0; k < 4; k++) {
		px += r->det_P[k][0] / 4;
		py += r->det_P[k][1] / 4;
		vc += r->det_px[k][1] / 4;
	}
	if (!have) {
		r->rs_x = px;
		r->rs_y = py;
		r->rs_t = t;
		r->rs_have = 1;
		return;
	}
	vx = (px - r->rs_x) / (t - r->rs_t);
	vy = (py - r->rs_y) / (t - r->rs_t);
	r->rs_x = px;
	r->rs_y = py;
	r->rs_t = t;
	/* only the motion along the image rows shears the square: motion along
	 * the columns stretches it, which the detector's own bias along the
	 * columns mimics (tens of ms on our renderer's tags), so it is left
	 * out.  A: the local map from pixels to the plane (the four corners,
	 * least squares); the part of V along the rows is A (A^-1 V)_u. */
	{
		double uc = 0, sxx = 0, sxy = 0, syy = 0, pxu = 0, pxv = 0, pyu = 0, pyv = 0, det, a[2][2],
		       du;
		for (int k = 0; k < 4; k++)
			uc += r->det_px[k][0] / 4;
		for (int k = 0; k < 4; k++) {
			double u = r->det_px[k][0] - uc, v = r->det_px[k][1] - vc;
			double X = r->det_P[k][0] - px, Y = r->det_P[k][1] - py;
			sxx += u * u, sxy += u * v, syy += v * v;
			pxu += X * u, pxv += X * v, pyu += Y * u, pyv += Y * v;
		}
		det = sxx * syy - sxy * sxy;
		if (!(fabs(det) > 0))
			return;
		/* A = [pxu pxv; pyu pyv] [sxx sxy; sxy syy]^-1 */
		a[0][0] = (pxu * syy - pxv * sxy) / det;
		a[0][1] = (pxv * sxx - pxu * sxy) / det;
		a[1][0] = (pyu * syy - pyv * sxy) / det;
		a[1][1] = (pyv * sxx - pyu * sxy) / det;
		det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
		if (!(fabs(det) > 0))
			return;
		du = (a[1][1] * vx - a[0][1] * vy) / det; /* (A^-1 V)_u: px/s along the rows */
		vx = a[0][0] * du;
		vy = a[1][0] * du;
	}
	/* the unit square mirrored like the plane's quad (shoelace signs) */
	for (int k = 0; k < 4; k++)
		area += r->det_P[k][0] * r->det_P[(k + 1) % 4][1] - r->det_P[(k + 1) % 4][0] * r->det_P[k][1];
	for (int k = 0; k < 4; k++) {
		l[k][0] = l0[k][0];
		l[k][1] = area < 0 ? l0[k][1] : -l0[k][1];
	}
	for (int k = 0; k < 4; k++) {
		y[2 * k] = r->det_P[k][0];
		y[2 * k + 1] = r->det_P[k][1];
		z[2 * k] = vx * (r->det_px[k][1] - vc);
		z[2 * k + 1] = vy * (r->det_px[k][1] - vc);
	}
	/* project out C (means) and a, b (dot products with l and its turn) */
	for (int pass = 0; pass < 2; pass++) {
		double *q = pass ? z : y, mx = 0, my = 0, a = 0, b = 0;
		for (int k = 0; k < 4; k++) {
			mx += q[2 * k] / 4;
			my += q[2 * k + 1] / 4;
		}
		for (int k = 0; k < 4; k++) {
			a += (l[k][0] * (q[2 * k] - mx) + l[k][1] * (q[2 * k + 1] - my)) / 8;
			b += (-l[k][1] * (q[2 * k] - mx) + l[k][0] * (q[2 * k + 1] - my)) / 8;
		}
		for (int k = 0; k < 4; k++) {
			q[2 * k] -= mx + a * l[k][0] - b * l[k][1];
			q[2 * k + 1] -= my + b * l[k][0] + a * l[k][1];
		}
	}
	for (int i = 0; i < 8; i++) {
		tr->rs_yy += y[i] * y[i];
		tr->rs_zy += z[i] * y[i];
		tr->rs_zz += z[i] * z[i];
		zn += z[i] * z[i];
	}
	for (int k = 0; k < 4; k++) {
		side_m += hypot(r->det_P[(k + 1) % 4][0] - r->det_P[k][0],
		                r->det_P[(k + 1) % 4][1] - r->det_P[k][1]);
		side_px += hypot(r->det_px[(k + 1) % 4][0] - r->det_px[k][0],
		                 r->det_px[(k + 1) % 4][1] - r->det_px[k][1]);
	}
	if (side_px > 0)
		tr->rs_bz += side_m / side_px * sqrt(zn);
	tr->st.readout_n++;
	if (tr->rs_zz > 0) {
		double rho = tr->rs_zy / tr->rs_zz, rss = tr->rs_yy - tr->rs_zy * rho;
		long dof = 4 * tr->st.readout_n - 1;
		tr->st.readout_s = rho * tr->h;
		tr->st.readout_se_s = dof > 0 && rss > 0 ? sqrt(rss / dof / tr->rs_zz) * tr->h : NAN;
		tr->st.readout_bias_s = READOUT_CORNER_BIAS_PX * tr->rs_bz / tr->rs_zz * tr->h;
	}
}

/* After a detection: the tag's levels for later holds (and its model,
 * made on the first detection when holding is on). */
static void learn_tag(wl_tracker *tr, robot *r, const wl_track_image *img)
{
	int area[4];
	double ab[2];
	if (r->has_shape != 2)
		return;
	r->has_shape = 1;
	readout_shear(tr, r, img->t_s);
	if (!(tr->o.hold_max_s > 0))
		return;
	if (!r->model && !r->no_model &&
	    wl_tagmodel_create(tr->o.family, r->spec.id, &r->model, NULL) != WL_OK)
		r->no_model = 1; /* no memory, or no pattern for this id: never held */
	if (!r->model)
		return;
	readable(tr, img, area);
	if (wl_tagmodel_levels(r->model, (const double(*)[2])r->det_px, img->luma, img->luma_stride, area,
	                       ab) &&
	    ab[1] > 0) {
		r->ab[0] = ab[0];
		r->ab[1] = ab[1];
		r->has_levels = 1;
	}
}

static void detect_window(wl_tracker *tr, const wl_track_image *img, robot *r)
{
	int win[4], nh;
	window_at(tr, r, img->t_s, 0.0, img->roi, win);
	wl_tagdet_set(tr->det, window_decimate(tr, r), tr->o.quad_sigma, tr->o.decode_sharpening);
	nh = wl_tagdet_detect(tr->det, img->luma, img->luma_stride, win[0], win[1], win[2], win[3], tr->hits,
	                      MAX_HITS);
	tr->st.window_scans++;
	r->searched = 1;
	take_hits(tr, nh, img->t_s);
}

/* full: search the whole frame (or, on a frame holding only a region, that
 * region) before the windows */
static void detect_tags(wl_tracker *tr, const wl_track_image *img, int full, int whole)
{
	int nh;
	if (full) {
		int area[4];
		readable(tr, img, area);
		wl_tagdet_set(tr->det, tr->o.quad_decimate, tr->o.quad_sigma, tr->o.decode_sharpening);
		nh = wl_tagdet_detect(tr->det, img->luma, img->luma_stride, area[0], area[1], area[2],
		                      area[3], tr->hits, MAX_HITS);
		if (whole)
			tr->st.full_scans++;
		else
			tr->st.window_scans++;
		for (int i = 0; i < tr->n; i++)
			tr->r[i].searched = whole || tr->r[i].seen;
		take_hits(tr, nh, img->t_s);
	}
	for (int i = 0; i < tr->n; i++) {
		robot *r = &tr->r[i];
		if (r->found || out_of_view(tr, r, img->t_s))
			continue;
		/* lost: the whole frame was searched, no window needed */
		if (!(full && whole && r->misses >= tr->o.lost_after))
			detect_window(tr, img, r);
		if (!r->found)
			hold_tag(tr, r, img);
	}
	for (int i = 0; i < tr->n; i++)
		learn_tag(tr, &tr->r[i], img);
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

/* One cap of r (k 0: front, 1: back) in window win: the blob of its range
 * nearest to (pu, pv) (the largest when pu < 0).  A blob smaller than the
 * cap's usual area is partly washed out: then, and when there is no blob,
 * a tracked cap is held by fitting its disc with the washed pixels counted
 * as cap (capfit.c).  Returns 0 when the cap is not there, 1 found, 2 held;
 * *cu, *cv its centre, *area its pixel count (found) and *score (held). */
static int find_cap(wl_tracker *tr, robot *r, int k, const wl_track_image *img, const int win[4], double pu,
                    double pv, int may_hold, double *cu, double *cv, double *area, double *score)
{
	const wl_hsv_range *hr = k ? &r->spec.back : &r->spec.front;
	wl_blob b;
	int have = best_blob(tr, img, win, hr, pu, pv, &b);
	double usual = r->cap_known[k] ? WL_PI * r->cap_r[k] * r->cap_r[k] : 0;
	wl_capfit f;
	if (have && (!r->cap_known[k] || b.area_px >= CAP_WHOLE * usual)) {
		int area4[4];
		double rad = sqrt(b.area_px / WL_PI), rgb[3];
		*cu = b.cu;
		*cv = b.cv;
		*area = b.area_px;
		/* learn the cap's size and colour on whole blobs */
		readable(tr, img, area4);
		if (wl_cap_colour(img->rgb, img->rgb_stride, area4, hr, b.cu, b.cv, rad, rgb)) {
			double a = r->cap_known[k] ? 0.2 : 1.0;
			r->cap_r[k] = a * rad + (1 - a) * r->cap_r[k];
			for (int c = 0; c < 3; c++)
				r->cap_rgb[k][c] = a * rgb[c] + (1 - a) * r->cap_rgb[k][c];
			r->cap_known[k] = 1;
		}
		r->cap_u[k] = b.cu;
		r->cap_v[k] = b.cv;
		return 1;
	}
	if (!may_hold || !r->cap_known[k])
		return 0;
	/* around the blob left, else where the cap is predicted */
	if (!have) {
		double dt = img->t_s - r->t_last;
		if (dt > PREDICT_MAX_S)
			dt = PREDICT_MAX_S;
		b.cu = r->cap_u[k] + r->vu * dt;
		b.cv = r->cap_v[k] + r->vv * dt;
	}
	tr->st.hold_tries++;
	if (!wl_cap_fit(img->rgb, img->rgb_stride, win, hr, r->cap_rgb[k], r->cap_r[k], b.cu, b.cv,
	                have ? r->cap_r[k] : HOLD_SEARCH_PX + r->cap_r[k] * 0.5, &f))
		return 0;
	if (f.score < tr->o.hold_min_score || f.other_frac > CAP_OTHER_MAX)
		return 0;
	*cu = f.cu;
	*cv = f.cv;
	*area = NAN;
	*score = f.score;
	r->cap_u[k] = f.cu;
	r->cap_v[k] = f.cv;
	return 2;
}

static void colour_robot(wl_tracker *tr, robot *r, const wl_track_image *img, int full)
{
	int win[4] = {0, 0, tr->w, tr->h}, fk, bk = 0;
	int may_hold = tr->o.hold_max_s > 0 && r->seen && r->misses < tr->o.lost_after &&
	               img->t_s - r->t_detected <= tr->o.hold_max_s;
	double pu = -1, pv = -1, z = plane_of(tr, r), fu, fv, fa, fs = 1, bu = 0, bv = 0, ba = 0, bs = 1;
	wl_track_obs o;
	double fx, fy, bx, by, u, v, size;
	if (!full) {
		window_at(tr, r, img->t_s, 0.0, img->roi, win);
		predict_px(r, img->t_s, &pu, &pv);
		tr->st.window_scans++;
	}
	r->searched = 1;
	/* the front cap nearest the prediction (its own last place when known) */
	if (!full && r->cap_known[0]) {
		double dt = img->t_s - r->t_last;
		if (dt > PREDICT_MAX_S)
			dt = PREDICT_MAX_S;
		pu = r->cap_u[0] + r->vu * dt;
		pv = r->cap_v[0] + r->vv * dt;
	}
	if (!(fk = find_cap(tr, r, 0, img, win, pu, pv, may_hold && !full, &fu, &fv, &fa, &fs)))
		return;
	memset(&o, 0, sizeof o);
	o.id = r->spec.id;
	o.ok = 1;
	o.hold_score = o.t_detect_s = NAN;
	if (r->spec.back.set) {
		/* the back cap nearest the front cap found */
		double qu = fu, qv = fv;
		if (r->cap_known[1] && r->cap_known[0]) {
			/* where it was relative to the front cap */
			qu = fu + (r->cap_u[1] - r->cap_u[0]);
			qv = fv + (r->cap_v[1] - r->cap_v[0]);
		}
		if (!(bk = find_cap(tr, r, 1, img, win, qu, qv, may_hold && !full, &bu, &bv, &ba, &bs)))
			return;
		if (!wl_tracker_pixel_to_plane(tr, fu, fv, z, &fx, &fy) ||
		    !wl_tracker_pixel_to_plane(tr, bu, bv, z, &bx, &by))
			return;
		if (!isnan(r->spec.body_diameter_m) &&
		    hypot(fx - bx, fy - by) > 1.5 * r->spec.body_diameter_m)
			return; /* caps of two different things */
		o.x_m = 0.5 * (fx + bx);
		o.y_m = 0.5 * (fy + by);
		o.heading_rad = wl_wrap_pi(atan2(fy - by, fx - bx) + r->spec.heading_offset_rad);
		o.heading_source = WL_HS_CAPS;
		u = 0.5 * (fu + bu);
		v = 0.5 * (fv + bv);
		o.margin = fk == 1 && bk == 1 ? fa + ba : NAN;
		size = hypot(fu - bu, fv - bv) + 2.0 * r->cap_r[0];
	} else {
		if (!wl_tracker_pixel_to_plane(tr, fu, fv, z, &o.x_m, &o.y_m))
			return;
		u = fu;
		v = fv;
		o.margin = fk == 1 ? fa : NAN;
		size = 2.0 * r->cap_r[0];
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
	o.size_px = fk == 1 ? 2.0 * sqrt(fa / WL_PI) : 2.0 * r->cap_r[0];
	o.held = fk == 2 || bk == 2;
	if (o.held) {
		o.hold_score = fmin(fk == 2 ? fs : 1.0, bk == 2 ? bs : 1.0);
		tr->st.held_rows++;
	} else {
		r->t_detected = img->t_s;
	}
	r->cur = o;
	found(tr, r, img->t_s, u, v, size);
	r->held = o.held;
}

static void detect_colour(wl_tracker *tr, const wl_track_image *img, int full)
{
	if (full)
		tr->st.full_scans++;
	for (int i = 0; i < tr->n; i++) {
		robot *r = &tr->r[i];
		int use_window =
		        r->seen && !out_of_view(tr, r, img->t_s) && !(full && r->misses >= tr->o.lost_after);
		if (full)
			r->searched = 1;
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
		/* a robot lost, missed or held now: whole frames until it is
		 * detected again, so that its searches are never cut short */
		if (!r->seen || r->misses > 0 || r->held)
			return 1;
		/* the window it would get then (its motion term covers the frames
		 * in between), with room for the growth of ROI_MISSES misses (a
		 * window that grows beyond is cut to the region: still searched,
		 * and the same on every run) */
		window_at(tr, r, tr->t_prev + lookahead_s, 0.75 * r->size_px * ROI_MISSES, NULL, win);
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

/* the output row of r this frame */
static void row_of(const wl_tracker *tr, const robot *r, const wl_track_image *img, wl_track_obs *o)
{
	if (r->found) {
		*o = r->cur;
		if (tr->o.readout_s > 0)
			o->t_detect_s = img->t_s + tr->o.readout_s * o->v_px / tr->h;
		else
			o->t_detect_s = img->t_s;
		return;
	}
	memset(o, 0, sizeof *o);
	o->id = r->spec.id;
	o->u_px = o->v_px = o->x_m = o->y_m = NAN;
	o->heading_rad = o->margin = o->size_px = NAN;
	o->hold_score = o->t_detect_s = NAN;
}

wl_status wl_tracker_frame(wl_tracker *tr, const wl_track_image *img, const wl_track_obs **obs, int *n,
                           wl_err *err)
{
	int full, whole, k = 0;
	if (img->width_px != tr->w || img->height_px != tr->h)
		return wl_err_set(err, WL_EDECODE, "frame %lld: size %dx%d differs from the clip's %dx%d",
		                  (long long)img->index, img->width_px, img->height_px, tr->w, tr->h);
	if (tr->o.mode == WL_TRACK_COLOUR && !img->rgb)
		return wl_err_set(err, WL_EINVAL, "frame %lld: colour mode needs RGB frames",
		                  (long long)img->index);
	/* a frame holding only part of the picture cannot be searched whole: a
	 * full-frame search due then searches that part (the producer was asked
	 * for whole frames and they follow) */
	whole = img->roi[2] == 0 || (img->roi[2] >= tr->w && img->roi[3] >= tr->h);
	full = need_full(tr, img->t_s);
	for (int i = 0; i < tr->n; i++)
		tr->r[i].found = tr->r[i].held = tr->r[i].searched = 0;
	if (tr->o.mode == WL_TRACK_TAG)
		detect_tags(tr, img, full, whole);
	else
		detect_colour(tr, img, full && whole);
	if (full && whole) {
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
		row_of(tr, r, img, &tr->obs[k]);
		if (!r->found) {
			tr->st.lost_rows++;
			if (r->searched)
				tr->st.lost_searched++;
			else
				tr->st.lost_out_of_view++;
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
