/*
 * scene.c: the renderer's scene file (JSON, see docs/synth.md): parsing with
 * errors that name the file and the key path, defaults, the camera built
 * with wl_camera_look_at, the path model, frame times, and saving the scene
 * actually used.
 */
#include "synth/synth.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/afile.h"
#include "core/jsonio.h"
#include "synth/synth_priv.h"

/* Where we are in the file, for messages: "scene.json: robots[0].path". */
typedef struct {
	const char *name;
	char where[160];
	wl_err *err;
} pctx;

static wl_status bad(const pctx *p, const char *key, const char *what)
{
	return wl_err_set(p->err, WL_EFORMAT, "%s: %s%skey '%s' %s", p->name, p->where,
	                  p->where[0] ? ": " : "", key, what);
}

/* Every key of obj must be in allowed (NULL-terminated). */
static wl_status check_keys(const pctx *p, const cJSON *obj, const char *const *allowed)
{
	const cJSON *c;
	if (!cJSON_IsObject(obj))
		return wl_err_set(p->err, WL_EFORMAT, "%s: %s: must be an object", p->name,
		                  p->where[0] ? p->where : "top level");
	for (c = obj->child; c; c = c->next) {
		int ok = 0;
		for (const char *const *a = allowed; *a && !ok; a++)
			ok = strcmp(c->string, *a) == 0;
		if (!ok)
			return bad(p, c->string,
			           "is not known: check the spelling (docs/synth.md lists the keys)");
	}
	return WL_OK;
}

/* A number, with a default when absent (required: no default) and a range. */
static wl_status num(const pctx *p, const cJSON *obj, const char *key, int required, double def, double lo,
                     double hi, double *out)
{
	const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
	char buf[160];
	if (!v) {
		if (required)
			return bad(p, key, "is missing");
		*out = def;
		return WL_OK;
	}
	if (!cJSON_IsNumber(v) || !isfinite(v->valuedouble))
		return bad(p, key, "must be a number");
	if (v->valuedouble < lo || v->valuedouble > hi) {
		snprintf(buf, sizeof buf, "is %g: must be in [%g, %g]", v->valuedouble, lo, hi);
		return bad(p, key, buf);
	}
	*out = v->valuedouble;
	return WL_OK;
}

static wl_status inum(const pctx *p, const cJSON *obj, const char *key, int required, int def, int lo, int hi,
                      int *out)
{
	double d;
	wl_status st = num(p, obj, key, required, def, lo, hi, &d);
	if (st)
		return st;
	if (d != floor(d))
		return bad(p, key, "must be a whole number");
	*out = (int)d;
	return WL_OK;
}

/* An array of n numbers; absent -> def (NULL def: required). */
static wl_status vec(const pctx *p, const cJSON *obj, const char *key, int n, const double *def, double lo,
                     double hi, double *out)
{
	const cJSON *a = cJSON_GetObjectItemCaseSensitive(obj, key), *v;
	int i = 0;
	char buf[96];
	if (!a) {
		if (!def)
			return bad(p, key, "is missing");
		memcpy(out, def, (size_t)n * sizeof *out);
		return WL_OK;
	}
	snprintf(buf, sizeof buf, "must be an array of %d numbers in [%g, %g]", n, lo, hi);
	if (!cJSON_IsArray(a) || cJSON_GetArraySize(a) != n)
		return bad(p, key, buf);
	cJSON_ArrayForEach(v, a)
	{
		if (!cJSON_IsNumber(v) || !isfinite(v->valuedouble) || v->valuedouble < lo ||
		    v->valuedouble > hi)
			return bad(p, key, buf);
		out[i++] = v->valuedouble;
	}
	return WL_OK;
}

static wl_status rgb(const pctx *p, const cJSON *obj, const char *key, const uint8_t def[3], uint8_t out[3])
{
	double d[3] = {def[0], def[1], def[2]}, v[3];
	wl_status st = vec(p, obj, key, 3, d, 0, 255, v);
	for (int i = 0; !st && i < 3; i++)
		out[i] = (uint8_t)lround(v[i]);
	return st;
}

static const cJSON *child(const cJSON *obj, const char *key)
{
	return cJSON_GetObjectItemCaseSensitive(obj, key);
}

static void enter(pctx *p, const char *fmt, int idx)
{
	snprintf(p->where, sizeof p->where, fmt, idx);
}

#define TRY(x)                                                                                               \
	do {                                                                                                 \
		if ((st = (x)))                                                                              \
			return st;                                                                           \
	} while (0)

static wl_status parse_tank(pctx *p, const cJSON *root, wl_synth_scene *sc)
{
	static const char *const keys[] = {"size_m", "wall_m", "floor_rgb", "wall_rgb", "surround_rgb", NULL};
	static const uint8_t floor_d[3] = {178, 190, 196}, wall_d[3] = {60, 70, 80},
	                     sur_d[3] = {105, 100, 95};
	const cJSON *t = child(root, "tank");
	double sz[2];
	wl_status st;
	enter(p, "tank", 0);
	if (!t)
		return wl_err_set(p->err, WL_EFORMAT,
		                  "%s: key 'tank' is missing: give at least \"tank\": {\"size_m\": [L, W]}",
		                  p->name);
	TRY(check_keys(p, t, keys));
	TRY(vec(p, t, "size_m", 2, NULL, 0.01, 1000, sz));
	sc->tank_length_m = sz[0];
	sc->tank_width_m = sz[1];
	TRY(num(p, t, "wall_m", 0, 0.03, 0, 10, &sc->wall_m));
	TRY(rgb(p, t, "floor_rgb", floor_d, sc->floor_rgb));
	TRY(rgb(p, t, "wall_rgb", wall_d, sc->wall_rgb));
	TRY(rgb(p, t, "surround_rgb", sur_d, sc->surround_rgb));
	return WL_OK;
}

static wl_status parse_markers(pctx *p, const cJSON *root, wl_synth_scene *sc)
{
	static const char *const keys[] = {"id", "center_m", "size_m", "yaw_deg", "z_m", NULL};
	const cJSON *a = child(root, "markers"), *m;
	wl_status st;
	int i = 0;
	sc->n_markers = 0;
	if (!a)
		return WL_OK;
	if (!cJSON_IsArray(a))
		return wl_err_set(p->err, WL_EFORMAT, "%s: key 'markers' must be an array of objects",
		                  p->name);
	if (cJSON_GetArraySize(a) > WL_SYNTH_MAX_MARKERS)
		return wl_err_set(p->err, WL_ELIMIT, "%s: key 'markers': more than %d markers", p->name,
		                  WL_SYNTH_MAX_MARKERS);
	cJSON_ArrayForEach(m, a)
	{
		wl_synth_marker *k = &sc->markers[i];
		double c[2], yaw;
		enter(p, "markers[%d]", i);
		TRY(check_keys(p, m, keys));
		TRY(inum(p, m, "id", 1, 0, 0, 586, &k->id)); /* tag36h11 has 587 codes */
		TRY(vec(p, m, "center_m", 2, NULL, -1000, 1000, c));
		TRY(num(p, m, "size_m", 0, 0.12, 0.001, 100, &k->size_m));
		TRY(num(p, m, "yaw_deg", 0, 0, -3600, 3600, &yaw));
		TRY(num(p, m, "z_m", 0, 0, 0, 100, &k->z_m));
		k->x_m = c[0];
		k->y_m = c[1];
		k->yaw_rad = yaw * WL_DEG;
		i++;
	}
	sc->n_markers = i;
	return WL_OK;
}

/* Builds sc->cam from the camera keys: intrinsics, then the look-at pose. */
static wl_status parse_camera(pctx *p, const cJSON *root, wl_synth_scene *sc)
{
	static const char *const keys[] = {
	        "width_px", "height_px", "hfov_deg",   "focal_px", "principal_px", "k1",      "k2", "p1",
	        "p2",       "k3",        "position_m", "tilt_deg", "tilt_dir_deg", "yaw_deg", NULL};
	const cJSON *c = child(root, "camera");
	int w, h;
	double f, hfov, pp[2], dpp[2], pos_d[3], deg, eye[3], tgt[3];
	wl_status st;
	enter(p, "camera", 0);
	if (!c)
		return wl_err_set(p->err, WL_EFORMAT, "%s: key 'camera' is missing", p->name);
	TRY(check_keys(p, c, keys));
	TRY(inum(p, c, "width_px", 0, 1280, 16, WL_SYNTH_MAX_SIZE_PX, &w));
	TRY(inum(p, c, "height_px", 0, 720, 16, WL_SYNTH_MAX_SIZE_PX, &h));
	if (w % 2 || h % 2)
		return bad(p, w % 2 ? "width_px" : "height_px", "must be even (H.264 4:2:0)");
	if (child(c, "focal_px") && child(c, "hfov_deg"))
		return bad(p, "focal_px", "and 'hfov_deg' are both given: give one");
	if (child(c, "focal_px")) {
		TRY(num(p, c, "focal_px", 1, 0, 1, 1e6, &f));
		hfov = 2 * atan(0.5 * w / f);
	} else {
		TRY(num(p, c, "hfov_deg", 0, 75, 1, 170, &deg));
		hfov = deg * WL_DEG;
		f = 0.5 * w / tan(0.5 * hfov);
	}
	sc->hfov_rad = hfov;
	dpp[0] = 0.5 * (w - 1); /* pixel centres at integers: the image centre */
	dpp[1] = 0.5 * (h - 1);
	TRY(vec(p, c, "principal_px", 2, dpp, -1e5, 1e5, pp));
	wl_camera_init(&sc->cam, w, h, f, f, pp[0], pp[1]);
	TRY(num(p, c, "k1", 0, 0, -10, 10, &sc->cam.dist[0]));
	TRY(num(p, c, "k2", 0, 0, -10, 10, &sc->cam.dist[1]));
	TRY(num(p, c, "p1", 0, 0, -1, 1, &sc->cam.dist[2]));
	TRY(num(p, c, "p2", 0, 0, -1, 1, &sc->cam.dist[3]));
	TRY(num(p, c, "k3", 0, 0, -10, 10, &sc->cam.dist[4]));
	pos_d[0] = 0.5 * sc->tank_length_m;
	pos_d[1] = 0.5 * sc->tank_width_m;
	pos_d[2] = 2.0;
	TRY(vec(p, c, "position_m", 3, pos_d, -1000, 1000, sc->cam_pos_m));
	TRY(num(p, c, "tilt_deg", 0, 0, 0, 80, &deg));
	sc->tilt_rad = deg * WL_DEG;
	TRY(num(p, c, "tilt_dir_deg", 0, 90, -360, 360, &deg));
	sc->tilt_dir_rad = deg * WL_DEG;
	TRY(num(p, c, "yaw_deg", 0, 0, -360, 360, &deg));
	sc->yaw_rad = deg * WL_DEG;
	if (sc->cam_pos_m[2] <= 0.05)
		return bad(p, "position_m",
		           "puts the camera at or below the floor: its z must be above 0.05 m");
	memcpy(eye, sc->cam_pos_m, sizeof eye);
	/* the optical axis leans tilt away from straight down, toward the
	 * floor direction tilt_dir (CCW from +x) */
	tgt[0] = eye[0] + sin(sc->tilt_rad) * cos(sc->tilt_dir_rad);
	tgt[1] = eye[1] + sin(sc->tilt_rad) * sin(sc->tilt_dir_rad);
	tgt[2] = eye[2] - cos(sc->tilt_rad);
	wl_camera_look_at(&sc->cam, eye, tgt, sc->yaw_rad);
	if (sc->water_depth_m > 0 && sc->cam_pos_m[2] <= sc->water_depth_m)
		return bad(p, "position_m",
		           "puts the camera under the water surface: raise it above water_depth_m");
	sc->cam.water_depth_m = sc->water_depth_m;
	sc->cam.water_index = sc->water_index;
	return WL_OK;
}

/* Rolling shutter: the readout from the first coded row to the last. */
static wl_status parse_readout(pctx *p, const cJSON *t, wl_synth_scene *sc)
{
	double ms;
	wl_status st;
	TRY(num(p, t, "readout_ms", 0, 0, 0, 1000, &ms));
	sc->readout_s = ms / 1000.0;
	if (sc->readout_s > 0 && sc->readout_s >= 1.0 / sc->fps)
		return bad(p, "readout_ms",
		           "is not shorter than a frame interval: give less than 1000 / fps");
	return WL_OK;
}

/* camera_move: the camera turns about its own centre at t_s (tilt about
 * its x axis, yaw about the vertical) and shifts by shift_m: a bumped
 * tripod.  Needs the camera parsed first. */
static wl_status parse_camera_move(pctx *p, const cJSON *root, wl_synth_scene *sc)
{
	static const char *const keys[] = {"t_s", "tilt_deg", "yaw_deg", "shift_m", NULL};
	static const double zero[3] = {0, 0, 0};
	const cJSON *m = child(root, "camera_move");
	double deg, Rx[9], Rz[9], tmp[9], C[3];
	wl_status st;
	enter(p, "camera_move", 0);
	sc->has_move = 0;
	if (!m)
		return WL_OK;
	TRY(check_keys(p, m, keys));
	TRY(num(p, m, "t_s", 1, 0, 0, 1e6, &sc->move_t_s));
	TRY(num(p, m, "tilt_deg", 0, 0, -30, 30, &deg));
	sc->move_tilt_rad = deg * WL_DEG;
	TRY(num(p, m, "yaw_deg", 0, 0, -180, 180, &deg));
	sc->move_yaw_rad = deg * WL_DEG;
	TRY(vec(p, m, "shift_m", 3, zero, -10, 10, sc->move_shift_m));
	sc->has_move = 1;
	sc->cam_moved = sc->cam;
	wl_camera_position(&sc->cam, C);
	{
		double c = cos(sc->move_tilt_rad), s = sin(sc->move_tilt_rad);
		double x[9] = {1, 0, 0, 0, c, -s, 0, s, c};
		memcpy(Rx, x, sizeof x);
	}
	{
		double c = cos(sc->move_yaw_rad), s = sin(sc->move_yaw_rad);
		double z[9] = {c, -s, 0, s, c, 0, 0, 0, 1};
		memcpy(Rz, z, sizeof z);
	}
	/* R' = Rx · R · Rzᵀ: a turn about the camera's x axis after one about
	 * the world's vertical; the centre moves by shift */
	for (int i = 0; i < 3; i++)
		for (int j = 0; j < 3; j++) {
			double a = 0;
			for (int k = 0; k < 3; k++)
				a += sc->cam.R[3 * i + k] * Rz[3 * j + k];
			tmp[3 * i + j] = a;
		}
	for (int i = 0; i < 3; i++)
		for (int j = 0; j < 3; j++) {
			double a = 0;
			for (int k = 0; k < 3; k++)
				a += Rx[3 * i + k] * tmp[3 * k + j];
			sc->cam_moved.R[3 * i + j] = a;
		}
	for (int i = 0; i < 3; i++)
		C[i] += sc->move_shift_m[i];
	for (int i = 0; i < 3; i++)
		sc->cam_moved.t[i] = -(sc->cam_moved.R[3 * i] * C[0] + sc->cam_moved.R[3 * i + 1] * C[1] +
		                       sc->cam_moved.R[3 * i + 2] * C[2]);
	return WL_OK;
}

const wl_camera *wl_synth_camera_at(const wl_synth_scene *sc, double t_s)
{
	return sc->has_move && t_s >= sc->move_t_s ? &sc->cam_moved : &sc->cam;
}

static wl_status parse_timing(pctx *p, const cJSON *root, wl_synth_scene *sc)
{
	static const char *const keys[] = {"fps",           "duration_s", "jitter",
	                                   "time_base_den", "readout_ms", NULL};
	const cJSON *t = child(root, "timing");
	static const cJSON empty;
	wl_status st;
	enter(p, "timing", 0);
	if (!t)
		t = &empty;
	else
		TRY(check_keys(p, t, keys));
	TRY(num(p, t, "fps", 0, 30, 0.1, 1000, &sc->fps));
	TRY(num(p, t, "duration_s", 0, 10, 0.001, 24 * 3600, &sc->duration_s));
	TRY(num(p, t, "jitter", 0, 0, 0, 0.9, &sc->jitter));
	TRY(inum(p, t, "time_base_den", 0, 90000, 1, 1000000, &sc->time_base_den));
	TRY(parse_readout(p, t, sc));
	if (wl_synth_frame_count(sc) > WL_SYNTH_MAX_FRAMES)
		return bad(p, "duration_s", "gives more than 1000000 frames: shorten the clip");
	/* the smallest interval must be at least one tick of the time base */
	if ((1 - sc->jitter) / sc->fps * sc->time_base_den < 2)
		return bad(p, "time_base_den",
		           "is too coarse for this frame rate and jitter: raise it (90000)");
	return WL_OK;
}

static wl_status parse_encoding(pctx *p, const cJSON *root, wl_synth_scene *sc)
{
	static const char *const keys[] = {"crf", "bit_rate_bps", "b_frames", "rotation_deg", NULL};
	const cJSON *e = child(root, "encoding");
	static const cJSON empty;
	wl_status st;
	enter(p, "encoding", 0);
	if (!e)
		e = &empty;
	else
		TRY(check_keys(p, e, keys));
	TRY(inum(p, e, "crf", 0, 18, 1, 51, &sc->crf));
	TRY(inum(p, e, "bit_rate_bps", 0, 0, 0, 1000000000, &sc->bit_rate_bps));
	TRY(inum(p, e, "b_frames", 0, 0, 0, 16, &sc->b_frames));
	TRY(inum(p, e, "rotation_deg", 0, 0, 0, 270, &sc->rotation_deg));
	if (sc->rotation_deg % 90)
		return bad(p, "rotation_deg", "must be 0, 90, 180 or 270");
	return WL_OK;
}

static wl_status parse_effects(pctx *p, const cJSON *root, wl_synth_scene *sc)
{
	static const char *const keys[] = {"supersample", "noise_sigma",      "blur_samples",
	                                   "exposure_s",  "glare_count",      "glare_radius_px",
	                                   "glare_gain",  "glare_speed_pxps", NULL};
	const cJSON *e = child(root, "effects");
	static const cJSON empty;
	wl_status st;
	enter(p, "effects", 0);
	if (!e)
		e = &empty;
	else
		TRY(check_keys(p, e, keys));
	TRY(inum(p, e, "supersample", 0, 3, 1, 8, &sc->supersample));
	TRY(num(p, e, "noise_sigma", 0, 0, 0, 100, &sc->noise_sigma));
	TRY(inum(p, e, "blur_samples", 0, 1, 1, 32, &sc->blur_samples));
	TRY(num(p, e, "exposure_s", 0, 0, 0, 1, &sc->exposure_s));
	TRY(inum(p, e, "glare_count", 0, 0, 0, 16, &sc->n_glare));
	TRY(num(p, e, "glare_radius_px", 0, 40, 1, 2000, &sc->glare_radius_px));
	TRY(num(p, e, "glare_gain", 0, 120, 0, 255, &sc->glare_gain));
	TRY(num(p, e, "glare_speed_pxps", 0, 30, 0, 10000, &sc->glare_speed_pxps));
	return WL_OK;
}

static wl_status parse_marker_kind(pctx *p, const cJSON *m, wl_synth_robot *r)
{
	static const char *const keys[] = {"type",     "tag_id", "size_m",         "offset_deg", "front_rgb",
	                                   "back_rgb", "rgb",    "cap_diameter_m", "offset_m",   NULL};
	static const uint8_t red[3] = {220, 40, 40}, blue[3] = {40, 80, 220};
	const char *type;
	double deg;
	wl_status st;
	size_t n = strlen(p->where);
	snprintf(p->where + n, sizeof p->where - n, ".marker");
	if (!m)
		return bad(p, "type", "is missing (the robot's 'marker' object is missing)");
	TRY(check_keys(p, m, keys));
	if (!cJSON_IsString(child(m, "type")))
		return bad(p, "type", "must be \"tag\", \"caps\" or \"cap\"");
	type = child(m, "type")->valuestring;
	if (strcmp(type, "tag") == 0) {
		r->kind = WL_SYNTH_TAG;
		TRY(inum(p, m, "tag_id", 1, 0, 0, 586, &r->tag_id));
		TRY(num(p, m, "size_m", 0, 0.6 * r->diameter_m, 0.001, 100, &r->tag_size_m));
		TRY(num(p, m, "offset_deg", 0, 0, -360, 360, &deg));
		r->tag_offset_rad = deg * WL_DEG;
		if (r->tag_size_m * 10.0 / 8.0 > 1.5 * r->diameter_m)
			return bad(p, "size_m",
			           "makes the tag card (10/8 of size_m with its white border) wider than 1.5 "
			           "disc diameters");
	} else if (strcmp(type, "caps") == 0 || strcmp(type, "cap") == 0) {
		int two = strcmp(type, "caps") == 0;
		r->kind = two ? WL_SYNTH_CAPS : WL_SYNTH_CAP;
		TRY(rgb(p, m, two ? "front_rgb" : "rgb", red, r->front_rgb));
		TRY(rgb(p, m, "back_rgb", blue, r->back_rgb));
		TRY(num(p, m, "cap_diameter_m", 0, 0.3 * r->diameter_m, 0.001, 100, &r->cap_diameter_m));
		TRY(num(p, m, "offset_m", 0, two ? 0.25 * r->diameter_m : 0, 0, 100, &r->cap_offset_m));
	} else {
		return bad(p, "type", "must be \"tag\", \"caps\" or \"cap\"");
	}
	p->where[n] = 0;
	return WL_OK;
}

static wl_status parse_path(pctx *p, const cJSON *q, wl_synth_robot *r, const wl_synth_scene *sc)
{
	static const char *const keys[] = {
	        "start_m",     "heading_deg", "speed_mps",         "curvature_1pm", "rest_s", "accel_s",
	        "yaw_osc_deg", "yaw_osc_hz",  "yaw_osc_phase_deg", "pivot_ahead_m", NULL};
	wl_synth_path *w = &r->path;
	double s[2], deg, ds[2] = {0.5 * sc->tank_length_m, 0.5 * sc->tank_width_m};
	wl_status st;
	size_t n = strlen(p->where);
	static const cJSON empty;
	snprintf(p->where + n, sizeof p->where - n, ".path");
	if (!q)
		q = &empty;
	else
		TRY(check_keys(p, q, keys));
	TRY(vec(p, q, "start_m", 2, ds, -1000, 1000, s));
	w->x0_m = s[0];
	w->y0_m = s[1];
	TRY(num(p, q, "heading_deg", 0, 0, -3600, 3600, &deg));
	w->heading0_rad = deg * WL_DEG;
	TRY(num(p, q, "speed_mps", 0, 0.1, 0, 100, &w->speed_mps));
	TRY(num(p, q, "curvature_1pm", 0, 0, -1000, 1000, &w->curvature_1pm));
	TRY(num(p, q, "rest_s", 0, 0, 0, 1e6, &w->rest_s));
	TRY(num(p, q, "accel_s", 0, 0, 0, 1e6, &w->accel_s));
	TRY(num(p, q, "yaw_osc_deg", 0, 0, 0, 90, &deg));
	w->osc_amp_rad = deg * WL_DEG;
	TRY(num(p, q, "yaw_osc_hz", 0, 1, 0, 1000, &w->osc_freq_hz));
	TRY(num(p, q, "yaw_osc_phase_deg", 0, 0, -360, 360, &deg));
	w->osc_phase_rad = deg * WL_DEG;
	TRY(num(p, q, "pivot_ahead_m", 0, 0, -10, 10, &w->pivot_ahead_m));
	p->where[n] = 0;
	return WL_OK;
}

static wl_status parse_occlusions(pctx *p, const cJSON *a, wl_synth_robot *r)
{
	const cJSON *it;
	int i = 0;
	if (!a)
		return WL_OK;
	if (!cJSON_IsArray(a) || cJSON_GetArraySize(a) > WL_SYNTH_MAX_OCCL)
		return bad(p, "occlusions", "must be an array of at most 16 [t0_s, t1_s] pairs");
	cJSON_ArrayForEach(it, a)
	{
		const cJSON *x0 = cJSON_GetArrayItem(it, 0), *x1 = cJSON_GetArrayItem(it, 1);
		if (!cJSON_IsArray(it) || cJSON_GetArraySize(it) != 2 || !cJSON_IsNumber(x0) ||
		    !cJSON_IsNumber(x1) || !(x0->valuedouble <= x1->valuedouble))
			return bad(p, "occlusions", "items must be [t0_s, t1_s] with t0_s <= t1_s");
		r->occl_t0_s[i] = x0->valuedouble;
		r->occl_t1_s[i] = x1->valuedouble;
		i++;
	}
	r->n_occl = i;
	return WL_OK;
}

/* robots[].docks: [{"with": id, "offset_m": [along, left], "heading_deg",
 * "t0_s", "t1_s", "blend_s"}]; `with` holds the id until resolve_docks. */
static wl_status parse_docks(pctx *p, const cJSON *a, wl_synth_robot *r)
{
	static const char *const keys[] = {"with", "offset_m", "heading_deg", "t0_s",
	                                   "t1_s", "blend_s",  NULL};
	static const double off_d[2] = {0, 0};
	const cJSON *it;
	wl_status st;
	size_t n = strlen(p->where);
	int i = 0;
	r->n_docks = 0;
	if (!a)
		return WL_OK;
	if (!cJSON_IsArray(a) || cJSON_GetArraySize(a) > WL_SYNTH_MAX_DOCKS)
		return bad(p, "docks", "must be an array of at most 4 objects");
	cJSON_ArrayForEach(it, a)
	{
		wl_synth_dock *d = &r->docks[i];
		double off[2], deg;
		snprintf(p->where + n, sizeof p->where - n, ".docks[%d]", i);
		TRY(check_keys(p, it, keys));
		TRY(inum(p, it, "with", 1, 0, 0, 1000000, &d->with));
		TRY(vec(p, it, "offset_m", 2, off_d, -100, 100, off));
		d->along_m = off[0];
		d->left_m = off[1];
		TRY(num(p, it, "heading_deg", 0, 0, -360, 360, &deg));
		d->dheading_rad = deg * WL_DEG;
		TRY(num(p, it, "t0_s", 1, 0, 0, 1e6, &d->t0_s));
		TRY(num(p, it, "t1_s", 1, 0, 0, 1e6, &d->t1_s));
		TRY(num(p, it, "blend_s", 0, 0.5, 0, 1e3, &d->blend_s));
		if (d->t1_s < d->t0_s)
			return bad(p, "t1_s", "is before t0_s");
		i++;
	}
	p->where[n] = 0;
	r->n_docks = i;
	return WL_OK;
}

/* Docks name their leader by robot id: turn it into an index; a leader
 * must not dock itself (one level only, no chains). */
static wl_status resolve_docks(pctx *p, wl_synth_scene *sc)
{
	for (int i = 0; i < sc->n_robots; i++) {
		wl_synth_robot *r = &sc->robots[i];
		for (int k = 0; k < r->n_docks; k++) {
			int id = r->docks[k].with, j;
			for (j = 0; j < sc->n_robots && sc->robots[j].id != id; j++)
				;
			snprintf(p->where, sizeof p->where, "robots[%d].docks[%d]", i, k);
			if (j == sc->n_robots)
				return bad(p, "with", "names no robot id of this scene");
			if (j == i)
				return bad(p, "with", "names the robot itself");
			if (sc->robots[j].n_docks > 0)
				return bad(p, "with",
				           "names a robot that docks itself: dock to a robot without docks");
			r->docks[k].with = j;
		}
	}
	p->where[0] = 0;
	return WL_OK;
}

static wl_status parse_robots(pctx *p, const cJSON *root, wl_synth_scene *sc)
{
	static const char *const keys[] = {"id",   "diameter_m", "height_m", "disc_rgb", "marker",
	                                   "path", "occlusions", "docks",    NULL};
	static const uint8_t disc_d[3] = {235, 200, 40};
	const cJSON *a = child(root, "robots"), *o;
	wl_status st;
	int i = 0;
	sc->n_robots = 0;
	if (!a)
		return WL_OK;
	if (!cJSON_IsArray(a))
		return wl_err_set(p->err, WL_EFORMAT, "%s: key 'robots' must be an array of objects",
		                  p->name);
	if (cJSON_GetArraySize(a) > WL_SYNTH_MAX_ROBOTS)
		return wl_err_set(p->err, WL_ELIMIT, "%s: key 'robots': more than %d robots", p->name,
		                  WL_SYNTH_MAX_ROBOTS);
	cJSON_ArrayForEach(o, a)
	{
		wl_synth_robot *r = &sc->robots[i];
		enter(p, "robots[%d]", i);
		TRY(check_keys(p, o, keys));
		TRY(inum(p, o, "id", 0, i, 0, 1000000, &r->id));
		TRY(num(p, o, "diameter_m", 0, 0.12, 0.005, 100, &r->diameter_m));
		TRY(num(p, o, "height_m", 0, 0.05, 0, 100, &r->height_m));
		TRY(rgb(p, o, "disc_rgb", disc_d, r->disc_rgb));
		if (r->height_m >= sc->cam_pos_m[2] - 0.05)
			return bad(p, "height_m", "puts the marker plane at or above the camera");
		TRY(parse_marker_kind(p, child(o, "marker"), r));
		TRY(parse_path(p, child(o, "path"), r, sc));
		TRY(parse_occlusions(p, child(o, "occlusions"), r));
		TRY(parse_docks(p, child(o, "docks"), r));
		i++;
	}
	sc->n_robots = i;
	return resolve_docks(p, sc);
}

/* glare_spots: [{"robot": id, "start_px", "velocity_pxps", "t0_s", "repeat_s",
 * "radius_px", "gain"}] */
static wl_status parse_spots(pctx *p, const cJSON *root, wl_synth_scene *sc)
{
	static const char *const keys[] = {"robot",    "start_px",  "velocity_pxps", "t0_s",
	                                   "repeat_s", "radius_px", "gain",          NULL};
	static const double zero[2] = {0, 0};
	const cJSON *a = child(root, "glare_spots"), *it;
	wl_status st;
	int i = 0;
	sc->n_spots = 0;
	if (!a)
		return WL_OK;
	if (!cJSON_IsArray(a) || cJSON_GetArraySize(a) > WL_SYNTH_MAX_SPOTS)
		return wl_err_set(p->err, WL_EFORMAT,
		                  "%s: key 'glare_spots' must be an array of at most %d objects", p->name,
		                  WL_SYNTH_MAX_SPOTS);
	cJSON_ArrayForEach(it, a)
	{
		wl_synth_spot *g = &sc->spots[i];
		enter(p, "glare_spots[%d]", i);
		TRY(check_keys(p, it, keys));
		g->robot = -1;
		if (child(it, "robot")) {
			int id, j;
			TRY(inum(p, it, "robot", 1, 0, 0, 1000000, &id));
			for (j = 0; j < sc->n_robots && sc->robots[j].id != id; j++)
				;
			if (j == sc->n_robots)
				return bad(p, "robot", "names no robot id of this scene");
			g->robot = j;
		}
		TRY(vec(p, it, "start_px", 2, zero, -1e5, 1e5, g->start_px));
		TRY(vec(p, it, "velocity_pxps", 2, zero, -1e5, 1e5, g->velocity_pxps));
		TRY(num(p, it, "t0_s", 0, 0, 0, 1e6, &g->t0_s));
		TRY(num(p, it, "repeat_s", 0, 0, 0, 1e6, &g->repeat_s));
		TRY(num(p, it, "radius_px", 0, 40, 1, 2000, &g->radius_px));
		TRY(num(p, it, "gain", 0, 120, 0, 255, &g->gain));
		i++;
	}
	sc->n_spots = i;
	p->where[0] = 0;
	return WL_OK;
}

/* occluders: [{"shape", "size_m", "height_m", "rgb", "start_m",
 * "velocity_mps", "t0_s", "t1_s"}] */
static wl_status parse_occluders(pctx *p, const cJSON *root, wl_synth_scene *sc)
{
	static const char *const keys[] = {"shape",        "size_m", "height_m", "rgb", "start_m",
	                                   "velocity_mps", "t0_s",   "t1_s",     NULL};
	static const double zero[2] = {0, 0};
	static const uint8_t grey[3] = {90, 80, 70};
	const cJSON *a = child(root, "occluders"), *it;
	wl_status st;
	int i = 0;
	sc->n_occluders = 0;
	if (!a)
		return WL_OK;
	if (!cJSON_IsArray(a) || cJSON_GetArraySize(a) > WL_SYNTH_MAX_OCCLUDERS)
		return wl_err_set(p->err, WL_EFORMAT,
		                  "%s: key 'occluders' must be an array of at most %d objects", p->name,
		                  WL_SYNTH_MAX_OCCLUDERS);
	cJSON_ArrayForEach(it, a)
	{
		wl_synth_occluder *o = &sc->occluders[i];
		const cJSON *shape;
		double top = 0;
		enter(p, "occluders[%d]", i);
		TRY(check_keys(p, it, keys));
		shape = child(it, "shape");
		if (shape && !(cJSON_IsString(shape) && (strcmp(shape->valuestring, "disc") == 0 ||
		                                         strcmp(shape->valuestring, "rect") == 0)))
			return bad(p, "shape", "must be \"disc\" or \"rect\"");
		o->shape = shape && strcmp(shape->valuestring, "rect") == 0 ? WL_SYNTH_RECT : WL_SYNTH_DISC;
		TRY(vec(p, it, "size_m", 2, NULL, 0.001, 100, o->size_m));
		for (int k = 0; k < sc->n_robots; k++)
			top = fmax(top, sc->robots[k].height_m);
		TRY(num(p, it, "height_m", 0, top + 0.01, 0, 100, &o->height_m));
		if (o->height_m >= sc->cam_pos_m[2] - 0.05)
			return bad(p, "height_m", "puts the occluder at or above the camera");
		TRY(rgb(p, it, "rgb", grey, o->rgb));
		TRY(vec(p, it, "start_m", 2, NULL, -1000, 1000, o->start_m));
		TRY(vec(p, it, "velocity_mps", 2, zero, -100, 100, o->velocity_mps));
		TRY(num(p, it, "t0_s", 0, 0, 0, 1e6, &o->t0_s));
		TRY(num(p, it, "t1_s", 0, 1e6, 0, 1e6, &o->t1_s));
		if (o->t1_s < o->t0_s)
			return bad(p, "t1_s", "is before t0_s");
		i++;
	}
	sc->n_occluders = i;
	p->where[0] = 0;
	return WL_OK;
}

static wl_status parse_root(pctx *p, const cJSON *root, wl_synth_scene *sc)
{
	static const char *const keys[] = {"description", "seed",      "tank",        "water_depth_m",
	                                   "water_index", "markers",   "camera",      "timing",
	                                   "encoding",    "effects",   "robots",      "camera_model",
	                                   "glare_spots", "occluders", "camera_move", "camera_model_moved",
	                                   NULL}; /* camera_model*: written by us, ignored on input */
	double seed;
	wl_status st;
	p->where[0] = 0;
	TRY(check_keys(p, root, keys));
	snprintf(sc->description, sizeof sc->description, "%s", wl_json_string_or(root, "description", ""));
	TRY(num(p, root, "seed", 0, 1, 0, 9007199254740992.0, &seed));
	sc->seed = (uint64_t)seed;
	TRY(num(p, root, "water_depth_m", 0, 0, 0, 100, &sc->water_depth_m));
	TRY(num(p, root, "water_index", 0, WL_WATER_INDEX, 1, 3, &sc->water_index));
	TRY(parse_tank(p, root, sc));
	TRY(parse_markers(p, root, sc));
	TRY(parse_camera(p, root, sc));
	TRY(parse_camera_move(p, root, sc));
	TRY(parse_timing(p, root, sc));
	TRY(parse_encoding(p, root, sc));
	TRY(parse_effects(p, root, sc));
	TRY(parse_robots(p, root, sc));
	TRY(parse_spots(p, root, sc));
	TRY(parse_occluders(p, root, sc));
	return WL_OK;
}

wl_status wl_synth_parse(const char *name, const char *text, size_t len, wl_synth_scene *sc, wl_err *err)
{
	cJSON *root = NULL;
	pctx p = {name, "", err};
	wl_status st = wl_json_parse(name, text, len, &root, err);
	if (st)
		return st;
	memset(sc, 0, sizeof *sc);
	st = parse_root(&p, root, sc);
	cJSON_Delete(root);
	return st;
}

wl_status wl_synth_load(const char *path, wl_synth_scene *sc, wl_err *err)
{
	char *text = NULL;
	size_t len = 0;
	wl_status st = wl_read_file(path, WL_JSON_MAX_BYTES, &text, &len, err);
	if (st)
		return st;
	st = wl_synth_parse(path, text, len, sc, err);
	free(text);
	return st;
}

/* ---- time and motion ---- */

long wl_synth_frame_count(const wl_synth_scene *sc)
{
	/* frames at nominal times k/fps for k/fps < duration */
	double n = ceil(sc->duration_s * sc->fps - 1e-9);
	return n < 1 ? 1 : (long)n;
}

int64_t wl_synth_frame_pts(const wl_synth_scene *sc, long k)
{
	/* Jitter moves each frame off its nominal slot by up to jitter/2 of an
	 * interval, uniformly; frame 0 stays at 0.  Consecutive times then
	 * differ by between (1 - jitter) and (1 + jitter) intervals: strictly
	 * increasing, and random access needs no history. */
	double off = 0;
	if (k > 0 && sc->jitter > 0) {
		uint64_t h = synth_mix64(sc->seed ^ synth_mix64(0x6a09e667f3bcc909ull + (uint64_t)k));
		off = (synth_unit(h) - 0.5) * sc->jitter;
	}
	return llround((k + off) / sc->fps * sc->time_base_den);
}

double wl_synth_frame_time(const wl_synth_scene *sc, long k)
{
	return (double)wl_synth_frame_pts(sc, k) / sc->time_base_den;
}

/* Distance travelled along the path and the path speed at time t:
 * at rest until rest_s, then a linear speed ramp over accel_s to the cruise
 * speed (constant acceleration), then constant speed. */
static void path_s(const wl_synth_path *w, double t, double *s, double *v)
{
	double tau = t - w->rest_s, V = w->speed_mps, A = w->accel_s;
	if (tau <= 0) {
		*s = 0;
		*v = 0;
	} else if (tau < A) {
		*s = 0.5 * V * tau * tau / A;
		*v = V * tau / A;
	} else {
		*s = 0.5 * V * A + V * (tau - A);
		*v = V;
	}
}

/* The robot's pose on its own path (docks left out). */
static void own_pose(const wl_synth_scene *sc, int ri, double t, wl_synth_pose *o)
{
	const wl_synth_robot *r = &sc->robots[ri];
	const wl_synth_path *w = &r->path;
	double s, v, psi, px, py, k = w->curvature_1pm, h, g;
	path_s(w, t, &s, &v);
	/* the path point: a straight line or a circular arc (constant curvature) */
	psi = w->heading0_rad + k * s;
	if (fabs(k) < 1e-12) {
		px = w->x0_m + s * cos(w->heading0_rad);
		py = w->y0_m + s * sin(w->heading0_rad);
	} else {
		px = w->x0_m + (sin(psi) - sin(w->heading0_rad)) / k;
		py = w->y0_m - (cos(psi) - cos(w->heading0_rad)) / k;
	}
	/* body yaw oscillation about the path tangent, scaled by v / cruise so
	 * that a robot at rest does not wag; the phase runs from the start of
	 * motion */
	g = w->speed_mps > 0 ? v / w->speed_mps : 0;
	h = psi;
	if (w->osc_amp_rad > 0 && t > w->rest_s)
		h += g * w->osc_amp_rad *
		     sin(2 * WL_PI * w->osc_freq_hz * (t - w->rest_s) + w->osc_phase_rad);
	/* the body turns about a pivot pivot_ahead_m ahead of the marker; the
	 * pivot follows the path, so the marker sways sideways by about
	 * -pivot * (h - psi) */
	o->x_m = px - w->pivot_ahead_m * cos(h);
	o->y_m = py - w->pivot_ahead_m * sin(h);
	o->heading_rad = wl_wrap_pi(h);
	o->speed_mps = v;
	o->visible = 1;
	for (int i = 0; i < r->n_occl; i++)
		if (t >= r->occl_t0_s[i] && t <= r->occl_t1_s[i])
			o->visible = 0;
}

/* Weight of the docked pose at t: 0 outside [t0 - blend, t1 + blend], 1 in
 * [t0, t1], a smoothstep between (continuous speed at the ends). */
static double dock_weight(const wl_synth_dock *d, double t)
{
	double x;
	if (t >= d->t0_s && t <= d->t1_s)
		return 1;
	if (d->blend_s <= 0)
		return 0;
	x = t < d->t0_s ? 1 - (d->t0_s - t) / d->blend_s : 1 - (t - d->t1_s) / d->blend_s;
	if (x <= 0)
		return 0;
	return x * x * (3 - 2 * x);
}

void wl_synth_robot_pose(const wl_synth_scene *sc, int ri, double t, wl_synth_pose *o)
{
	const wl_synth_robot *r = &sc->robots[ri];
	own_pose(sc, ri, t, o);
	for (int k = 0; k < r->n_docks; k++) {
		const wl_synth_dock *d = &r->docks[k];
		double w = dock_weight(d, t), ch, sh, dh;
		wl_synth_pose l;
		if (w <= 0)
			continue;
		own_pose(sc, d->with, t, &l);
		ch = cos(l.heading_rad);
		sh = sin(l.heading_rad);
		l.x_m += d->along_m * ch - d->left_m * sh;
		l.y_m += d->along_m * sh + d->left_m * ch;
		dh = wl_wrap_pi(l.heading_rad + d->dheading_rad - o->heading_rad);
		o->x_m += w * (l.x_m - o->x_m);
		o->y_m += w * (l.y_m - o->y_m);
		o->heading_rad = wl_wrap_pi(o->heading_rad + w * dh);
		o->speed_mps += w * (l.speed_mps - o->speed_mps); /* approximate while blending */
		break; /* spans do not overlap: the first active one */
	}
}

/* ---- saving ---- */

static void add_rgb(cJSON *o, const char *key, const uint8_t c[3])
{
	double d[3] = {c[0], c[1], c[2]};
	wl_json_add_numbers(o, key, d, 3);
}

static void docks_json(cJSON *m, const wl_synth_scene *sc, const wl_synth_robot *r)
{
	cJSON *a;
	if (r->n_docks == 0)
		return;
	a = cJSON_AddArrayToObject(m, "docks");
	for (int k = 0; k < r->n_docks; k++) {
		const wl_synth_dock *d = &r->docks[k];
		cJSON *o = cJSON_CreateObject();
		double off[2] = {d->along_m, d->left_m};
		cJSON_AddNumberToObject(o, "with", sc->robots[d->with].id);
		wl_json_add_numbers(o, "offset_m", off, 2);
		cJSON_AddNumberToObject(o, "heading_deg", d->dheading_rad / WL_DEG);
		cJSON_AddNumberToObject(o, "t0_s", d->t0_s);
		cJSON_AddNumberToObject(o, "t1_s", d->t1_s);
		cJSON_AddNumberToObject(o, "blend_s", d->blend_s);
		cJSON_AddItemToArray(a, o);
	}
}

/* glare_spots and occluders (written only when there are any) */
static void extras_json(cJSON *root, const wl_synth_scene *sc)
{
	cJSON *a;
	if (sc->n_spots > 0) {
		a = cJSON_AddArrayToObject(root, "glare_spots");
		for (int i = 0; i < sc->n_spots; i++) {
			const wl_synth_spot *g = &sc->spots[i];
			cJSON *o = cJSON_CreateObject();
			if (g->robot >= 0)
				cJSON_AddNumberToObject(o, "robot", sc->robots[g->robot].id);
			wl_json_add_numbers(o, "start_px", g->start_px, 2);
			wl_json_add_numbers(o, "velocity_pxps", g->velocity_pxps, 2);
			cJSON_AddNumberToObject(o, "t0_s", g->t0_s);
			cJSON_AddNumberToObject(o, "repeat_s", g->repeat_s);
			cJSON_AddNumberToObject(o, "radius_px", g->radius_px);
			cJSON_AddNumberToObject(o, "gain", g->gain);
			cJSON_AddItemToArray(a, o);
		}
	}
	if (sc->n_occluders > 0) {
		a = cJSON_AddArrayToObject(root, "occluders");
		for (int i = 0; i < sc->n_occluders; i++) {
			const wl_synth_occluder *q = &sc->occluders[i];
			cJSON *o = cJSON_CreateObject();
			cJSON_AddStringToObject(o, "shape", q->shape == WL_SYNTH_RECT ? "rect" : "disc");
			wl_json_add_numbers(o, "size_m", q->size_m, 2);
			cJSON_AddNumberToObject(o, "height_m", q->height_m);
			add_rgb(o, "rgb", q->rgb);
			wl_json_add_numbers(o, "start_m", q->start_m, 2);
			wl_json_add_numbers(o, "velocity_mps", q->velocity_mps, 2);
			cJSON_AddNumberToObject(o, "t0_s", q->t0_s);
			cJSON_AddNumberToObject(o, "t1_s", q->t1_s);
			cJSON_AddItemToArray(a, o);
		}
	}
}

static void add_camera_move(cJSON *root, const wl_synth_scene *sc)
{
	cJSON *o;
	double C[3];
	if (!sc->has_move)
		return;
	o = cJSON_AddObjectToObject(root, "camera_move");
	cJSON_AddNumberToObject(o, "t_s", sc->move_t_s);
	cJSON_AddNumberToObject(o, "tilt_deg", sc->move_tilt_rad / WL_DEG);
	cJSON_AddNumberToObject(o, "yaw_deg", sc->move_yaw_rad / WL_DEG);
	wl_json_add_numbers(o, "shift_m", sc->move_shift_m, 3);
	o = cJSON_AddObjectToObject(root, "camera_model_moved");
	wl_json_add_numbers(o, "K", sc->cam_moved.K, 9);
	wl_json_add_numbers(o, "dist", sc->cam_moved.dist, 5);
	wl_json_add_numbers(o, "R", sc->cam_moved.R, 9);
	wl_json_add_numbers(o, "t_m", sc->cam_moved.t, 3);
	wl_camera_position(&sc->cam_moved, C);
	wl_json_add_numbers(o, "position_m", C, 3);
}

static cJSON *scene_json(const wl_synth_scene *sc)
{
	cJSON *root = cJSON_CreateObject(), *o, *a, *m;
	double d[9];
	cJSON_AddStringToObject(root, "description", sc->description);
	cJSON_AddNumberToObject(root, "seed", (double)sc->seed);
	cJSON_AddNumberToObject(root, "water_depth_m", sc->water_depth_m);
	cJSON_AddNumberToObject(root, "water_index", sc->water_index);
	o = cJSON_AddObjectToObject(root, "tank");
	d[0] = sc->tank_length_m;
	d[1] = sc->tank_width_m;
	wl_json_add_numbers(o, "size_m", d, 2);
	cJSON_AddNumberToObject(o, "wall_m", sc->wall_m);
	add_rgb(o, "floor_rgb", sc->floor_rgb);
	add_rgb(o, "wall_rgb", sc->wall_rgb);
	add_rgb(o, "surround_rgb", sc->surround_rgb);
	a = cJSON_AddArrayToObject(root, "markers");
	for (int i = 0; i < sc->n_markers; i++) {
		const wl_synth_marker *k = &sc->markers[i];
		m = cJSON_CreateObject();
		cJSON_AddNumberToObject(m, "id", k->id);
		d[0] = k->x_m;
		d[1] = k->y_m;
		wl_json_add_numbers(m, "center_m", d, 2);
		cJSON_AddNumberToObject(m, "size_m", k->size_m);
		cJSON_AddNumberToObject(m, "yaw_deg", k->yaw_rad / WL_DEG);
		if (k->z_m != 0)
			cJSON_AddNumberToObject(m, "z_m", k->z_m);
		cJSON_AddItemToArray(a, m);
	}
	o = cJSON_AddObjectToObject(root, "camera");
	cJSON_AddNumberToObject(o, "width_px", sc->cam.width_px);
	cJSON_AddNumberToObject(o, "height_px", sc->cam.height_px);
	cJSON_AddNumberToObject(o, "focal_px", sc->cam.K[0]);
	d[0] = sc->cam.K[2];
	d[1] = sc->cam.K[5];
	wl_json_add_numbers(o, "principal_px", d, 2);
	cJSON_AddNumberToObject(o, "k1", sc->cam.dist[0]);
	cJSON_AddNumberToObject(o, "k2", sc->cam.dist[1]);
	cJSON_AddNumberToObject(o, "p1", sc->cam.dist[2]);
	cJSON_AddNumberToObject(o, "p2", sc->cam.dist[3]);
	cJSON_AddNumberToObject(o, "k3", sc->cam.dist[4]);
	wl_json_add_numbers(o, "position_m", sc->cam_pos_m, 3);
	cJSON_AddNumberToObject(o, "tilt_deg", sc->tilt_rad / WL_DEG);
	cJSON_AddNumberToObject(o, "tilt_dir_deg", sc->tilt_dir_rad / WL_DEG);
	cJSON_AddNumberToObject(o, "yaw_deg", sc->yaw_rad / WL_DEG);
	o = cJSON_AddObjectToObject(root, "timing");
	cJSON_AddNumberToObject(o, "fps", sc->fps);
	cJSON_AddNumberToObject(o, "duration_s", sc->duration_s);
	cJSON_AddNumberToObject(o, "jitter", sc->jitter);
	cJSON_AddNumberToObject(o, "time_base_den", sc->time_base_den);
	cJSON_AddNumberToObject(o, "readout_ms", sc->readout_s * 1000.0);
	o = cJSON_AddObjectToObject(root, "encoding");
	cJSON_AddNumberToObject(o, "crf", sc->crf);
	cJSON_AddNumberToObject(o, "bit_rate_bps", sc->bit_rate_bps);
	cJSON_AddNumberToObject(o, "b_frames", sc->b_frames);
	cJSON_AddNumberToObject(o, "rotation_deg", sc->rotation_deg);
	o = cJSON_AddObjectToObject(root, "effects");
	cJSON_AddNumberToObject(o, "supersample", sc->supersample);
	cJSON_AddNumberToObject(o, "noise_sigma", sc->noise_sigma);
	cJSON_AddNumberToObject(o, "blur_samples", sc->blur_samples);
	cJSON_AddNumberToObject(o, "exposure_s", sc->exposure_s);
	cJSON_AddNumberToObject(o, "glare_count", sc->n_glare);
	cJSON_AddNumberToObject(o, "glare_radius_px", sc->glare_radius_px);
	cJSON_AddNumberToObject(o, "glare_gain", sc->glare_gain);
	cJSON_AddNumberToObject(o, "glare_speed_pxps", sc->glare_speed_pxps);
	a = cJSON_AddArrayToObject(root, "robots");
	for (int i = 0; i < sc->n_robots; i++) {
		const wl_synth_robot *r = &sc->robots[i];
		const wl_synth_path *w = &r->path;
		cJSON *mk, *pa, *oc;
		m = cJSON_CreateObject();
		cJSON_AddNumberToObject(m, "id", r->id);
		cJSON_AddNumberToObject(m, "diameter_m", r->diameter_m);
		cJSON_AddNumberToObject(m, "height_m", r->height_m);
		add_rgb(m, "disc_rgb", r->disc_rgb);
		mk = cJSON_AddObjectToObject(m, "marker");
		if (r->kind == WL_SYNTH_TAG) {
			cJSON_AddStringToObject(mk, "type", "tag");
			cJSON_AddNumberToObject(mk, "tag_id", r->tag_id);
			cJSON_AddNumberToObject(mk, "size_m", r->tag_size_m);
			cJSON_AddNumberToObject(mk, "offset_deg", r->tag_offset_rad / WL_DEG);
		} else {
			cJSON_AddStringToObject(mk, "type", r->kind == WL_SYNTH_CAPS ? "caps" : "cap");
			add_rgb(mk, r->kind == WL_SYNTH_CAPS ? "front_rgb" : "rgb", r->front_rgb);
			if (r->kind == WL_SYNTH_CAPS)
				add_rgb(mk, "back_rgb", r->back_rgb);
			cJSON_AddNumberToObject(mk, "cap_diameter_m", r->cap_diameter_m);
			cJSON_AddNumberToObject(mk, "offset_m", r->cap_offset_m);
		}
		pa = cJSON_AddObjectToObject(m, "path");
		d[0] = w->x0_m;
		d[1] = w->y0_m;
		wl_json_add_numbers(pa, "start_m", d, 2);
		cJSON_AddNumberToObject(pa, "heading_deg", w->heading0_rad / WL_DEG);
		cJSON_AddNumberToObject(pa, "speed_mps", w->speed_mps);
		cJSON_AddNumberToObject(pa, "curvature_1pm", w->curvature_1pm);
		cJSON_AddNumberToObject(pa, "rest_s", w->rest_s);
		cJSON_AddNumberToObject(pa, "accel_s", w->accel_s);
		cJSON_AddNumberToObject(pa, "yaw_osc_deg", w->osc_amp_rad / WL_DEG);
		cJSON_AddNumberToObject(pa, "yaw_osc_hz", w->osc_freq_hz);
		cJSON_AddNumberToObject(pa, "yaw_osc_phase_deg", w->osc_phase_rad / WL_DEG);
		cJSON_AddNumberToObject(pa, "pivot_ahead_m", w->pivot_ahead_m);
		oc = cJSON_AddArrayToObject(m, "occlusions");
		for (int j = 0; j < r->n_occl; j++) {
			d[0] = r->occl_t0_s[j];
			d[1] = r->occl_t1_s[j];
			cJSON *pr = cJSON_CreateArray();
			cJSON_AddItemToArray(pr, cJSON_CreateNumber(d[0]));
			cJSON_AddItemToArray(pr, cJSON_CreateNumber(d[1]));
			cJSON_AddItemToArray(oc, pr);
		}
		docks_json(m, sc, r);
		cJSON_AddItemToArray(a, m);
	}
	extras_json(root, sc);
	/* the model actually rendered with (derived, not read back) */
	o = cJSON_AddObjectToObject(root, "camera_model");
	wl_json_add_numbers(o, "K", sc->cam.K, 9);
	wl_json_add_numbers(o, "dist", sc->cam.dist, 5);
	wl_json_add_numbers(o, "R", sc->cam.R, 9);
	wl_json_add_numbers(o, "t_m", sc->cam.t, 3);
	wl_camera_position(&sc->cam, d);
	wl_json_add_numbers(o, "position_m", d, 3);
	cJSON_AddNumberToObject(o, "hfov_deg", sc->hfov_rad / WL_DEG);
	cJSON_AddNumberToObject(o, "frames", (double)wl_synth_frame_count(sc));
	cJSON_AddStringToObject(o, "pixels", "coded");
	add_camera_move(root, sc);
	return root;
}

wl_status wl_synth_save_scene(const char *path, const wl_synth_scene *sc, wl_err *err)
{
	cJSON *root = scene_json(sc);
	wl_status st;
	if (!root)
		return wl_err_set(err, WL_ENOMEM, "out of memory writing '%s'", path);
	st = wl_json_save(path, root, err);
	cJSON_Delete(root);
	return st;
}
