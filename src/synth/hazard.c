/*
 * hazard.c: what real water and real phones add to a scene (synth.h,
 * docs/synth.md): aimed glare spots, opaque occluders above the robots,
 * the rolling-shutter time of a robot's centre row, and how much of each
 * robot's marker the camera sees.
 *
 * Occluders are drawn like the robots: every sample back-projects its
 * pixel onto the occluder's plane through the camera model (refraction
 * included) and is tested against the shape; with a rolling shutter each
 * coded row uses the shape's position at the row's own time.
 */
#include <math.h>
#include <string.h>

#include "synth/synth.h"
#include "synth/synth_priv.h"

static inline uint8_t clamp8(double v)
{
	return v <= 0 ? 0 : v >= 255 ? 255 : (uint8_t)(v + 0.5);
}

/* ---- occluders ---- */

static int occluder_present(const wl_synth_occluder *o, double t)
{
	return t >= o->t0_s && t <= o->t1_s;
}

/* Does occluder o cover the point (x, y) of its plane at time t? */
static int occluder_covers(const wl_synth_occluder *o, double t, double x, double y)
{
	double tau = t - o->t0_s;
	double dx = x - (o->start_m[0] + o->velocity_mps[0] * tau);
	double dy = y - (o->start_m[1] + o->velocity_mps[1] * tau);
	double ax = 0.5 * o->size_m[0], ay = 0.5 * o->size_m[1];
	if (!occluder_present(o, t))
		return 0;
	if (o->shape == WL_SYNTH_RECT)
		return fabs(dx) <= ax && fabs(dy) <= ay;
	return (dx * dx) / (ax * ax) + (dy * dy) / (ay * ay) <= 1.0;
}

int synth_project_ellipse(const wl_camera *cam, double cx, double cy, double z, double sx, double sy,
                          double lohi[4])
{
	for (int a = 0; a < 24; a++) {
		double ang = 2 * WL_PI * a / 24, X[3] = {cx + sx * cos(ang), cy + sy * sin(ang), z}, u, v;
		if (!wl_camera_project_water(cam, X, &u, &v))
			return 0;
		lohi[0] = fmin(lohi[0], u);
		lohi[1] = fmin(lohi[1], v);
		lohi[2] = fmax(lohi[2], u);
		lohi[3] = fmax(lohi[3], v);
	}
	return 1;
}

int synth_finish_box(const double lohi[4], int w, int h, int box[4])
{
	/* distortion can bend an outline beyond its polygon: a margin */
	box[0] = (int)floor(lohi[0]) - 3;
	box[1] = (int)floor(lohi[1]) - 3;
	box[2] = (int)ceil(lohi[2]) + 3;
	box[3] = (int)ceil(lohi[3]) + 3;
	if (box[0] < 0)
		box[0] = 0;
	if (box[1] < 0)
		box[1] = 0;
	if (box[2] > w - 1)
		box[2] = w - 1;
	if (box[3] > h - 1)
		box[3] = h - 1;
	return box[0] <= box[2] && box[1] <= box[3];
}

/* The pixel box of occluder o over the times [t0, t1]; 0 when off image. */
static int occluder_box(const wl_synth_scene *sc, const wl_synth_occluder *o, double t0, double t1,
                        int box[4])
{
	double lohi[4] = {1e30, 1e30, -1e30, -1e30};
	/* the circumscribed 24-gon of the ellipse (or the rectangle's circle) */
	double f = o->shape == WL_SYNTH_RECT ? 1.4142136 : 1.01;
	for (int k = 0; k < 3; k++) {
		double t = t0 + 0.5 * k * (t1 - t0), tau = t - o->t0_s;
		if (!synth_project_ellipse(&sc->cam, o->start_m[0] + o->velocity_mps[0] * tau,
		                           o->start_m[1] + o->velocity_mps[1] * tau, o->height_m,
		                           0.5 * o->size_m[0] * f, 0.5 * o->size_m[1] * f, lohi))
			return 0;
	}
	return synth_finish_box(lohi, sc->cam.width_px, sc->cam.height_px, box);
}

void synth_draw_occluders(const wl_synth_scene *sc, int ss, double t, uint8_t *rgb, int stride)
{
	double ro = sc->readout_s;
	int n = ss < 1 ? 1 : ss, hgt = sc->cam.height_px;
	for (int i = 0; i < sc->n_occluders; i++) {
		const wl_synth_occluder *o = &sc->occluders[i];
		int box[4];
		if (!occluder_present(o, t) && !occluder_present(o, t + ro))
			continue;
		if (!occluder_box(sc, o, t, t + ro, box))
			continue;
		for (int v = box[1]; v <= box[3]; v++) {
			double tv = t + ro * v / hgt;
			for (int u = box[0]; u <= box[2]; u++) {
				int hits = 0;
				for (int sy = 0; sy < n; sy++)
					for (int sx = 0; sx < n; sx++) {
						double uu = u + (sx + 0.5) / n - 0.5,
						       vv = v + (sy + 0.5) / n - 0.5, x, y;
						if (wl_camera_pixel_to_plane_water(&sc->cam, uu, vv,
						                                   o->height_m, &x, &y) &&
						    occluder_covers(o, tv, x, y))
							hits++;
					}
				if (hits) {
					uint8_t *p = rgb + (size_t)v * stride + (size_t)u * 3;
					double a = (double)hits / (n * n);
					for (int k = 0; k < 3; k++)
						p[k] = clamp8(a * o->rgb[k] + (1 - a) * p[k]);
				}
			}
		}
	}
}

/* ---- aimed glare spots ---- */

/* The centre of spot g at time t; 0 when it is not drawn then. */
static int spot_centre(const wl_synth_scene *sc, const wl_synth_spot *g, double t, double *cu, double *cv)
{
	double tau = t - g->t0_s, bu = 0, bv = 0;
	if (tau < 0)
		return 0;
	if (g->repeat_s > 0)
		tau = fmod(tau, g->repeat_s);
	if (g->robot >= 0) {
		wl_synth_pose p;
		double X[3];
		wl_synth_robot_pose(sc, g->robot, t, &p);
		X[0] = p.x_m;
		X[1] = p.y_m;
		X[2] = sc->robots[g->robot].height_m;
		if (!wl_camera_project_water(&sc->cam, X, &bu, &bv))
			return 0;
	}
	*cu = bu + g->start_px[0] + g->velocity_pxps[0] * tau;
	*cv = bv + g->start_px[1] + g->velocity_pxps[1] * tau;
	return 1;
}

void synth_add_spots(const wl_synth_scene *sc, double t, uint8_t *rgb, int stride)
{
	int w = sc->cam.width_px, h = sc->cam.height_px;
	for (int i = 0; i < sc->n_spots; i++) {
		const wl_synth_spot *g = &sc->spots[i];
		double cu, cv, sig = 0.5 * g->radius_px;
		int u0, u1, v0, v1;
		if (!spot_centre(sc, g, t, &cu, &cv))
			continue;
		u0 = (int)floor(cu - 3 * sig);
		u1 = (int)ceil(cu + 3 * sig);
		v0 = (int)floor(cv - 3 * sig);
		v1 = (int)ceil(cv + 3 * sig);
		if (u0 < 0)
			u0 = 0;
		if (v0 < 0)
			v0 = 0;
		if (u1 > w - 1)
			u1 = w - 1;
		if (v1 > h - 1)
			v1 = h - 1;
		for (int v = v0; v <= v1; v++)
			for (int u = u0; u <= u1; u++) {
				double d2 = (u - cu) * (u - cu) + (v - cv) * (v - cv);
				double a = g->gain * exp(-0.5 * d2 / (sig * sig));
				uint8_t *p = rgb + (size_t)v * stride + (size_t)u * 3;
				for (int k = 0; k < 3; k++)
					p[k] = clamp8(p[k] + a);
			}
	}
}

/* ---- rolling shutter: the centre row's time ---- */

double wl_synth_centre_time(const wl_synth_scene *sc, int ri, double t)
{
	double tc = t;
	if (!(sc->readout_s > 0))
		return t;
	/* tc = t + v(tc) / height * readout: a contraction (the robot moves far
	 * less than the image height during a readout), so a few fixed-point
	 * steps converge far below a microsecond */
	for (int it = 0; it < 8; it++) {
		wl_synth_pose p;
		double X[3], u, v;
		wl_synth_robot_pose(sc, ri, tc, &p);
		X[0] = p.x_m;
		X[1] = p.y_m;
		X[2] = sc->robots[ri].height_m;
		if (!wl_camera_project_water(&sc->cam, X, &u, &v))
			return t;
		tc = t + v / sc->cam.height_px * sc->readout_s;
	}
	return tc;
}

/* ---- visibility ---- */

/* Is the point (x, y) of robot j's marker plane on robot j (disc or tag
 * card) when it is at pose p? */
static int robot_covers(const wl_synth_robot *rb, const wl_synth_pose *p, double x, double y)
{
	double dx = x - p->x_m, dy = y - p->y_m, rr = 0.5 * rb->diameter_m;
	if (!p->visible)
		return 0;
	if (dx * dx + dy * dy <= rr * rr)
		return 1;
	if (rb->kind == WL_SYNTH_TAG) {
		double h = p->heading_rad + rb->tag_offset_rad, cu = cos(h), su = sin(h);
		double up = dx * cu + dy * su, right = dx * su - dy * cu,
		       half = 0.5 * rb->tag_size_m * 10.0 / 8.0;
		return fabs(up) <= half && fabs(right) <= half;
	}
	return 0;
}

/* Robots are drawn lowest marker plane first (ties in list order): is j
 * drawn after i? */
static int drawn_above(const wl_synth_scene *sc, int j, int i)
{
	double hj = sc->robots[j].height_m, hi = sc->robots[i].height_m;
	return hj > hi || (hj == hi && j > i);
}

#define VIS_N 12 /* samples per side of the marker */

double wl_synth_visible_fraction(const wl_synth_scene *sc, int ri, double t)
{
	const wl_synth_robot *rb = &sc->robots[ri];
	wl_synth_pose p, others[WL_SYNTH_MAX_ROBOTS];
	int seen = 0, total = 0, w = sc->cam.width_px, h = sc->cam.height_px;
	double hd, cu, su, ch, sh;
	wl_synth_robot_pose(sc, ri, t, &p);
	if (!p.visible)
		return 0;
	for (int j = 0; j < sc->n_robots; j++)
		if (j != ri && drawn_above(sc, j, ri))
			wl_synth_robot_pose(sc, j, t, &others[j]);
	hd = p.heading_rad + rb->tag_offset_rad;
	cu = cos(hd);
	su = sin(hd);
	ch = cos(p.heading_rad);
	sh = sin(p.heading_rad);
	for (int a = 0; a < VIS_N; a++) {
		for (int b = 0; b < VIS_N; b++) {
			double fa = (a + 0.5) / VIS_N - 0.5, fb = (b + 0.5) / VIS_N - 0.5, X[3], u, v;
			int hidden = 0;
			if (rb->kind == WL_SYNTH_TAG) {
				/* the black square: right = (su, -cu), up = (cu, su) */
				X[0] = p.x_m + rb->tag_size_m * (fa * su + fb * cu);
				X[1] = p.y_m + rb->tag_size_m * (-fa * cu + fb * su);
			} else {
				/* the front cap (and the back one on alternate samples) */
				double r = rb->cap_diameter_m,
				       off = (b % 2 && rb->kind == WL_SYNTH_CAPS) ? -1 : 1;
				if (fa * fa + fb * fb > 0.25)
					continue;
				X[0] = p.x_m + off * rb->cap_offset_m * ch + r * (fa * ch - fb * sh);
				X[1] = p.y_m + off * rb->cap_offset_m * sh + r * (fa * sh + fb * ch);
			}
			X[2] = rb->height_m;
			total++;
			if (!wl_camera_project_water(&sc->cam, X, &u, &v) || u < 0 || v < 0 || u > w - 1 ||
			    v > h - 1)
				continue;
			for (int k = 0; k < sc->n_occluders && !hidden; k++) {
				const wl_synth_occluder *o = &sc->occluders[k];
				double x, y;
				if (o->height_m > rb->height_m &&
				    wl_camera_pixel_to_plane_water(&sc->cam, u, v, o->height_m, &x, &y))
					hidden = occluder_covers(o, t, x, y);
			}
			for (int j = 0; j < sc->n_robots && !hidden; j++) {
				double x, y;
				if (j == ri || !drawn_above(sc, j, ri))
					continue;
				if (wl_camera_pixel_to_plane_water(&sc->cam, u, v, sc->robots[j].height_m, &x,
				                                   &y))
					hidden = robot_covers(&sc->robots[j], &others[j], x, y);
			}
			seen += !hidden;
		}
	}
	return total ? (double)seen / total : 0;
}
