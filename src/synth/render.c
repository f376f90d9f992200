/*
 * render.c: ray-cast rendering of a scene (see synth.h, docs/synth.md).
 *
 * Every sample back-projects its pixel through the camera model of
 * core/camera.h (distortion removed by wl_camera_undistort, refraction at
 * the water surface by wl_camera_pixel_to_plane_water) onto the floor or a
 * robot's marker plane and shades the hit point, so the image geometry is
 * exactly the model's.  Tags are textures: the hit point is taken into the
 * tag's cell grid (built from the AprilTag family's own bit layout, as
 * apriltag_to_image does) and the cell looked up.  Anti-aliasing: n x n
 * samples per pixel, box filter.
 *
 * Speed: the static background (floor, tank rim, floor markers) is rendered
 * once, with threads; a frame copies it and re-renders only each robot's
 * projected bounding box.  Robot edges are blended by coverage with the
 * background pixel (exact where the background is uniform across the pixel).
 */
#define _POSIX_C_SOURCE 200809L
#include "synth/synth.h"

#include <math.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>

#include <apriltag.h>
#include <tag36h11.h>

#include "synth/synth_priv.h"

#define TAG_BLACK 20.0f
#define TAG_WHITE 240.0f
#define NOISE_TAB 4096

static inline uint8_t clamp8(float v)
{
	return v <= 0 ? 0 : v >= 255 ? 255 : (uint8_t)(v + 0.5f);
}

typedef struct {
	int total;      /* cells across the card, white border included (10) */
	int black;      /* cells across the black square (8) */
	uint8_t *cells; /* total x total, row 0 at the tag's top, 1 = white */
} tag_tex;

struct wl_synth_renderer {
	const wl_synth_scene *sc;
	int w, h, ss;
	float *bg;               /* w x h x 3, the background while it is rendered */
	uint8_t *bg8;            /* the background rounded to 8 bits */
	uint8_t *bg8_moved;      /* the same seen by the moved camera (camera_move), or NULL */
	const wl_camera *bg_cam; /* the camera the background is being rendered with */
	int raised[WL_SYNTH_MAX_MARKERS], n_raised; /* raised floor markers, highest first */
	tag_tex *marker_tex;                        /* one per floor marker */
	tag_tex *robot_tex;                         /* one per robot (unused cells NULL) */
	int16_t noise[NOISE_TAB];
	int order[WL_SYNTH_MAX_ROBOTS]; /* robots by marker height, lowest first */
	double mcos[WL_SYNTH_MAX_MARKERS], msin[WL_SYNTH_MAX_MARKERS]; /* floor marker yaws */
};

/* A robot pose ready for shading: centre, heading and tag-up directions. */
typedef struct {
	double x, y, ch, sh, cu, su;
	int visible;
} rpose;

/* Builds the cell grid of one code exactly as AprilTag's apriltag_to_image:
 * bit i (most significant first) sits at (bit_x[i], bit_y[i]) inside the
 * black border; a white ring surrounds the black one. */
static int tex_build(const apriltag_family_t *fam, int id, tag_tex *t)
{
	uint64_t code = fam->codes[id];
	int tw = fam->total_width, wb = fam->width_at_border;
	int white_w = wb + (fam->reversed_border ? 0 : 2), white_s = (tw - white_w) / 2, bs = (tw - wb) / 2;
	t->total = tw;
	t->black = wb;
	t->cells = calloc((size_t)tw * tw, 1);
	if (!t->cells)
		return 0;
	for (int i = 0; i < white_w - 1; i++) {
		t->cells[white_s * tw + white_s + i] = 1;
		t->cells[(white_s + i) * tw + tw - 1 - white_s] = 1;
		t->cells[(tw - 1 - white_s) * tw + white_s + i + 1] = 1;
		t->cells[(white_s + 1 + i) * tw + white_s] = 1;
	}
	for (uint32_t i = 0; i < fam->nbits; i++)
		if (code & ((uint64_t)1 << (fam->nbits - i - 1)))
			t->cells[(fam->bit_y[i] + bs) * tw + fam->bit_x[i] + bs] = 1;
	return 1;
}

/* Looks up a point given in the tag's frame (metres; a right, b up, origin
 * at the centre).  Returns 0 outside the card, else sets *grey. */
static int tex_sample(const tag_tex *t, double size_m, double a, double b, float *grey)
{
	double cell = size_m / t->black, half = 0.5 * t->total;
	double cx = a / cell + half, cy = half - b / cell;
	int ix, iy;
	if (cx < 0 || cy < 0 || cx >= t->total || cy >= t->total)
		return 0;
	ix = (int)cx;
	iy = (int)cy;
	*grey = t->cells[iy * t->total + ix] ? TAG_WHITE : TAG_BLACK;
	return 1;
}

/* ---- the background ---- */

static void shade_floor(const wl_synth_renderer *r, double x, double y, float out[3])
{
	const wl_synth_scene *sc = r->sc;
	const uint8_t *c;
	for (int i = 0; i < sc->n_markers; i++) {
		const wl_synth_marker *m = &sc->markers[i];
		double dx = x - m->x_m, dy = y - m->y_m, cs = r->mcos[i], sn = r->msin[i];
		float g;
		if (m->z_m != 0)
			continue; /* drawn on its block by shade_raised */
		/* right = (cos yaw, sin yaw), up = (-sin yaw, cos yaw) */
		if (tex_sample(&r->marker_tex[i], m->size_m, dx * cs + dy * sn, -dx * sn + dy * cs, &g)) {
			out[0] = out[1] = out[2] = g;
			return;
		}
	}
	if (x >= 0 && y >= 0 && x <= sc->tank_length_m && y <= sc->tank_width_m)
		c = sc->floor_rgb;
	else if (x >= -sc->wall_m && y >= -sc->wall_m && x <= sc->tank_length_m + sc->wall_m &&
	         y <= sc->tank_width_m + sc->wall_m)
		c = sc->wall_rgb;
	else
		c = sc->surround_rgb;
	out[0] = c[0];
	out[1] = c[1];
	out[2] = c[2];
}

/* A floor marker raised on a block: the ray meets the card's plane z_m
 * first (highest markers first).  The block's sides are not drawn: the card
 * floats at its height.  Returns 1 when the sample lands on a card. */
static int shade_raised(const wl_synth_renderer *r, const wl_camera *cam, double u, double v, float out[3])
{
	const wl_synth_scene *sc = r->sc;
	for (int k = 0; k < r->n_raised; k++) {
		int i = r->raised[k];
		const wl_synth_marker *m = &sc->markers[i];
		double x, y, dx, dy;
		float g;
		if (!wl_camera_pixel_to_plane_water(cam, u, v, m->z_m, &x, &y))
			continue;
		dx = x - m->x_m;
		dy = y - m->y_m;
		if (tex_sample(&r->marker_tex[i], m->size_m, dx * r->mcos[i] + dy * r->msin[i],
		               -dx * r->msin[i] + dy * r->mcos[i], &g)) {
			out[0] = out[1] = out[2] = g;
			return 1;
		}
	}
	return 0;
}

typedef struct {
	wl_synth_renderer *r;
	int y0, y1;
} bg_job;

static void *bg_rows(void *arg)
{
	bg_job *j = arg;
	wl_synth_renderer *r = j->r;
	const wl_camera *cam = r->bg_cam;
	int n = r->ss;
	float inv = 1.0f / (float)(n * n);
	for (int v = j->y0; v < j->y1; v++) {
		for (int u = 0; u < r->w; u++) {
			float acc[3] = {0, 0, 0}, c[3];
			for (int sy = 0; sy < n; sy++) {
				for (int sx = 0; sx < n; sx++) {
					double uu = u + (sx + 0.5) / n - 0.5, vv = v + (sy + 0.5) / n - 0.5,
					       x, y;
					if (r->n_raised && shade_raised(r, cam, uu, vv, c)) {
						/* on a raised marker */
					} else if (wl_camera_pixel_to_plane_water(cam, uu, vv, 0, &x, &y)) {
						shade_floor(r, x, y, c);
					} else { /* a ray above the horizon: the surround */
						for (int k = 0; k < 3; k++)
							c[k] = r->sc->surround_rgb[k];
					}
					acc[0] += c[0];
					acc[1] += c[1];
					acc[2] += c[2];
				}
			}
			float *o = r->bg + ((size_t)v * r->w + u) * 3;
			o[0] = acc[0] * inv;
			o[1] = acc[1] * inv;
			o[2] = acc[2] * inv;
		}
	}
	return NULL;
}

static int render_background(wl_synth_renderer *r, int nthreads)
{
	pthread_t th[8];
	bg_job jobs[8];
	int started = 0;
	if (nthreads <= 0)
		nthreads = 2;
	if (nthreads > 8)
		nthreads = 8;
	for (int i = 0; i < nthreads; i++) {
		jobs[i].r = r;
		jobs[i].y0 = r->h * i / nthreads;
		jobs[i].y1 = r->h * (i + 1) / nthreads;
	}
	for (int i = 1; i < nthreads; i++) {
		if (pthread_create(&th[i], NULL, bg_rows, &jobs[i]) != 0)
			break;
		started = i;
	}
	bg_rows(&jobs[0]);
	for (int i = 1; i <= started; i++)
		pthread_join(th[i], NULL);
	/* rows of threads that could not start are rendered here */
	for (int i = started + 1; i < nthreads; i++)
		bg_rows(&jobs[i]);
	return 1;
}

static void noise_table(wl_synth_renderer *r)
{
	/* Box-Muller over counter-based uniforms (deterministic per seed),
	 * then standardised so the table itself has mean 0 and variance 1 */
	double g[NOISE_TAB], m = 0, v = 0;
	for (int i = 0; i < NOISE_TAB; i++) {
		double u1 = synth_unit(synth_mix64(r->sc->seed * 2654435761u + 2 * (uint64_t)i + 11));
		double u2 = synth_unit(synth_mix64(r->sc->seed * 2654435761u + 2 * (uint64_t)i + 12));
		g[i] = sqrt(-2 * log(1 - u1)) * cos(2 * WL_PI * u2);
		m += g[i];
	}
	m /= NOISE_TAB;
	for (int i = 0; i < NOISE_TAB; i++)
		v += (g[i] - m) * (g[i] - m);
	v = sqrt(v / NOISE_TAB);
	for (int i = 0; i < NOISE_TAB; i++)
		r->noise[i] = (int16_t)lround((g[i] - m) / v * r->sc->noise_sigma);
}

wl_status wl_synth_renderer_create(const wl_synth_scene *sc, int nthreads, wl_synth_renderer **out,
                                   wl_err *err)
{
	wl_synth_renderer *r = calloc(1, sizeof *r);
	apriltag_family_t *fam = NULL;
	wl_status st = WL_OK;
	*out = NULL;
	if (!r)
		return wl_err_set(err, WL_ENOMEM, "out of memory creating the renderer");
	r->sc = sc;
	r->w = sc->cam.width_px;
	r->h = sc->cam.height_px;
	r->ss = sc->supersample < 1 ? 1 : sc->supersample;
	r->bg = malloc((size_t)r->w * r->h * 3 * sizeof *r->bg);
	r->bg8 = malloc((size_t)r->w * r->h * 3);
	r->marker_tex = calloc((size_t)sc->n_markers + 1, sizeof *r->marker_tex);
	r->robot_tex = calloc((size_t)sc->n_robots + 1, sizeof *r->robot_tex);
	fam = tag36h11_create();
	if (!r->bg || !r->bg8 || !r->marker_tex || !r->robot_tex || !fam)
		goto nomem;
	for (int i = 0; i < sc->n_markers; i++) {
		if (sc->markers[i].id < 0 || (uint32_t)sc->markers[i].id >= fam->ncodes) {
			st = wl_err_set(err, WL_EINVAL,
			                "floor marker %d: tag id %d is not in tag36h11 (0..%u)", i,
			                sc->markers[i].id, fam->ncodes - 1);
			goto fail;
		}
		if (!tex_build(fam, sc->markers[i].id, &r->marker_tex[i]))
			goto nomem;
	}
	for (int i = 0; i < sc->n_robots; i++) {
		const wl_synth_robot *rb = &sc->robots[i];
		if (rb->kind != WL_SYNTH_TAG)
			continue;
		if (rb->tag_id < 0 || (uint32_t)rb->tag_id >= fam->ncodes) {
			st = wl_err_set(err, WL_EINVAL, "robot %d: tag id %d is not in tag36h11 (0..%u)", i,
			                rb->tag_id, fam->ncodes - 1);
			goto fail;
		}
		if (!tex_build(fam, rb->tag_id, &r->robot_tex[i]))
			goto nomem;
	}
	tag36h11_destroy(fam);
	fam = NULL;
	for (int i = 0; i < sc->n_robots; i++) /* insertion sort by height */
	{
		int j = i;
		while (j > 0 && sc->robots[r->order[j - 1]].height_m > sc->robots[i].height_m) {
			r->order[j] = r->order[j - 1];
			j--;
		}
		r->order[j] = i;
	}
	for (int i = 0; i < sc->n_markers; i++) {
		r->mcos[i] = cos(sc->markers[i].yaw_rad);
		r->msin[i] = sin(sc->markers[i].yaw_rad);
	}
	for (int i = 0; i < sc->n_markers; i++) { /* raised markers, highest first */
		int j = r->n_raised;
		if (sc->markers[i].z_m == 0)
			continue;
		while (j > 0 && sc->markers[r->raised[j - 1]].z_m < sc->markers[i].z_m) {
			r->raised[j] = r->raised[j - 1];
			j--;
		}
		r->raised[j] = i;
		r->n_raised++;
	}
	noise_table(r);
	r->bg_cam = &sc->cam;
	render_background(r, nthreads);
	for (size_t i = 0; i < (size_t)r->w * r->h * 3; i++)
		r->bg8[i] = clamp8(r->bg[i]);
	if (sc->has_move) { /* the background again, as the moved camera sees it */
		if (!(r->bg8_moved = malloc((size_t)r->w * r->h * 3)))
			goto nomem;
		r->bg_cam = &sc->cam_moved;
		render_background(r, nthreads);
		for (size_t i = 0; i < (size_t)r->w * r->h * 3; i++)
			r->bg8_moved[i] = clamp8(r->bg[i]);
	}
	free(r->bg); /* only the 8-bit copies are used from here on */
	r->bg = NULL;
	*out = r;
	return WL_OK;
nomem:
	st = wl_err_set(err, WL_ENOMEM, "out of memory creating the renderer (%dx%d)", r->w, r->h);
fail:
	if (fam)
		tag36h11_destroy(fam);
	wl_synth_renderer_destroy(r);
	return st;
}

void wl_synth_renderer_destroy(wl_synth_renderer *r)
{
	if (!r)
		return;
	for (int i = 0; r->marker_tex && i < r->sc->n_markers; i++)
		free(r->marker_tex[i].cells);
	for (int i = 0; r->robot_tex && i < r->sc->n_robots; i++)
		free(r->robot_tex[i].cells);
	free(r->marker_tex);
	free(r->robot_tex);
	free(r->bg);
	free(r->bg8);
	free(r->bg8_moved);
	free(r);
}

/* ---- robots ---- */

/* Shades a point of robot i's marker plane given relative to the marker
 * centre (dx, dy, metres, tank axes).  Returns 0 when off the robot. */
static int shade_robot(const wl_synth_renderer *r, int i, const rpose *p, double dx, double dy, float out[3])
{
	const wl_synth_robot *rb = &r->sc->robots[i];
	double rr = 0.5 * rb->diameter_m;
	if (rb->kind == WL_SYNTH_TAG) {
		/* the tag's up is heading + offset, its right 90 degrees clockwise of that */
		double up = dx * p->cu + dy * p->su, right = dx * p->su - dy * p->cu;
		float g;
		if (tex_sample(&r->robot_tex[i], rb->tag_size_m, right, up, &g)) {
			out[0] = out[1] = out[2] = g;
			return 1;
		}
	} else {
		double fwd = dx * p->ch + dy * p->sh, left = -dx * p->sh + dy * p->ch;
		double cr2 = 0.25 * rb->cap_diameter_m * rb->cap_diameter_m;
		double f1 = fwd - rb->cap_offset_m, f2 = fwd + rb->cap_offset_m;
		if (f1 * f1 + left * left <= cr2) {
			for (int k = 0; k < 3; k++)
				out[k] = rb->front_rgb[k];
			return 1;
		}
		if (rb->kind == WL_SYNTH_CAPS && f2 * f2 + left * left <= cr2) {
			for (int k = 0; k < 3; k++)
				out[k] = rb->back_rgb[k];
			return 1;
		}
	}
	if (dx * dx + dy * dy <= rr * rr) {
		for (int k = 0; k < 3; k++)
			out[k] = rb->disc_rgb[k];
		return 1;
	}
	return 0;
}

/* The pixel box that robot i can cover during the exposure of time t. */
static int robot_box(const wl_synth_renderer *r, const wl_camera *cam, int i, const rpose *poses, int np,
                     int box[4])
{
	const wl_synth_robot *rb = &r->sc->robots[i];
	double reach = 0.5 * rb->diameter_m, lohi[4] = {1e30, 1e30, -1e30, -1e30};
	if (rb->kind == WL_SYNTH_TAG) {
		double card = 0.5 * rb->tag_size_m * r->robot_tex[i].total / r->robot_tex[i].black * 1.4143;
		if (card > reach)
			reach = card;
	}
	/* circumscribe: the 24-gon with vertices at reach/cos(pi/24) */
	for (int j = 0; j < np; j++)
		if (!synth_project_ellipse(cam, poses[j].x, poses[j].y, rb->height_m, reach * 1.01,
		                           reach * 1.01, lohi))
			return 0;
	return synth_finish_box(lohi, r->w, r->h, box);
}

/* The sub-frame poses of robot i over an exposure centred on t. */
static void robot_poses(const wl_synth_renderer *r, int i, double t, int np, rpose *poses)
{
	const wl_synth_scene *sc = r->sc;
	for (int j = 0; j < np; j++) {
		/* sub-frame times spread evenly over an exposure centred on t */
		double dt = np > 1 ? sc->exposure_s * ((j + 0.5) / np - 0.5) : 0;
		wl_synth_pose p;
		wl_synth_robot_pose(sc, i, t + dt, &p);
		poses[j].x = p.x_m;
		poses[j].y = p.y_m;
		poses[j].ch = cos(p.heading_rad);
		poses[j].sh = sin(p.heading_rad);
		poses[j].cu = cos(p.heading_rad + sc->robots[i].tag_offset_rad);
		poses[j].su = sin(p.heading_rad + sc->robots[i].tag_offset_rad);
		poses[j].visible = p.visible;
	}
}

/* Renders robot i over the frame at time t: np sub-frame poses (motion
 * blur); with a rolling shutter (readout_s > 0) each coded row v is drawn
 * with the poses at its own time t + v / height * readout_s. */
static void draw_robot(const wl_synth_renderer *r, const wl_camera *cam, int i, double t, int np,
                       uint8_t *rgb, int stride)
{
	const wl_synth_robot *rb = &r->sc->robots[i];
	double ro = r->sc->readout_s;
	rpose poses[32], span[3 * 32];
	int box[4], n = r->ss, any = 0, nspan = 0;
	/* the box covers the robot over the whole readout */
	for (int k = 0; k < (ro > 0 ? 3 : 1); k++) {
		robot_poses(r, i, t + 0.5 * k * ro, np, span + nspan);
		nspan += np;
	}
	for (int j = 0; j < nspan; j++)
		any |= span[j].visible;
	if (!any || !robot_box(r, cam, i, span, nspan, box))
		return;
	memcpy(poses, span, (size_t)np * sizeof *poses);
	for (int v = box[1]; v <= box[3]; v++) {
		if (ro > 0)
			robot_poses(r, i, t + ro * v / r->h, np, poses);
		for (int u = box[0]; u <= box[2]; u++) {
			float acc[3] = {0, 0, 0}, c[3];
			int hits = 0, total = n * n * np;
			for (int sy = 0; sy < n; sy++) {
				for (int sx = 0; sx < n; sx++) {
					double uu = u + (sx + 0.5) / n - 0.5, vv = v + (sy + 0.5) / n - 0.5,
					       x, y;
					if (!wl_camera_pixel_to_plane_water(cam, uu, vv, rb->height_m, &x,
					                                    &y))
						continue;
					for (int j = 0; j < np; j++) {
						if (!poses[j].visible)
							continue;
						if (shade_robot(r, i, &poses[j], x - poses[j].x,
						                y - poses[j].y, c)) {
							acc[0] += c[0];
							acc[1] += c[1];
							acc[2] += c[2];
							hits++;
						}
					}
				}
			}
			if (hits) {
				uint8_t *o = rgb + (size_t)v * stride + (size_t)u * 3;
				float a = (float)(total - hits);
				for (int k = 0; k < 3; k++)
					o[k] = clamp8((acc[k] + a * o[k]) / (float)total);
			}
		}
	}
}

/* ---- glare, noise, output ---- */

static void add_glare(const wl_synth_renderer *r, double t, uint8_t *rgb, int stride)
{
	const wl_synth_scene *sc = r->sc;
	double rad = sc->glare_radius_px, sig = 0.5 * rad;
	for (int g = 0; g < sc->n_glare; g++) {
		uint64_t h = synth_mix64(sc->seed ^ (0x243f6a8885a308d3ull * (uint64_t)(g + 1)));
		double ang = 2 * WL_PI * synth_unit(synth_mix64(h + 1));
		double spanx = r->w + 4 * rad, spany = r->h + 4 * rad;
		/* drift in a straight line, wrapping around an enlarged frame */
		double cx = fmod(synth_unit(h) * spanx + sc->glare_speed_pxps * t * cos(ang), spanx);
		double cy = fmod(synth_unit(synth_mix64(h + 2)) * spany + sc->glare_speed_pxps * t * sin(ang),
		                 spany);
		if (cx < 0)
			cx += spanx;
		if (cy < 0)
			cy += spany;
		cx -= 2 * rad;
		cy -= 2 * rad;
		int u0 = (int)floor(cx - 3 * sig), u1 = (int)ceil(cx + 3 * sig);
		int v0 = (int)floor(cy - 3 * sig), v1 = (int)ceil(cy + 3 * sig);
		if (u0 < 0)
			u0 = 0;
		if (v0 < 0)
			v0 = 0;
		if (u1 > r->w - 1)
			u1 = r->w - 1;
		if (v1 > r->h - 1)
			v1 = r->h - 1;
		for (int v = v0; v <= v1; v++)
			for (int u = u0; u <= u1; u++) {
				double d2 = (u - cx) * (u - cx) + (v - cy) * (v - cy);
				float a = (float)(sc->glare_gain * exp(-0.5 * d2 / (sig * sig)));
				uint8_t *o = rgb + (size_t)v * stride + (size_t)u * 3;
				o[0] = clamp8(o[0] + a);
				o[1] = clamp8(o[1] + a);
				o[2] = clamp8(o[2] + a);
			}
	}
}

/* Adds Gaussian sensor noise in place, drawn for frame k. */
static void add_noise(const wl_synth_renderer *r, long k, uint8_t *rgb, int stride)
{
	uint64_t s = synth_mix64(r->sc->seed ^ synth_mix64(0x510e527fade682d1ull + (uint64_t)k)) | 1;
	for (int v = 0; v < r->h; v++) {
		uint8_t *dst = rgb + (size_t)v * stride;
		int n = r->w * 3, i = 0;
		while (i < n) {
			/* xorshift64 (Marsaglia 2003): five 12-bit table indices per draw */
			s ^= s << 13;
			s ^= s >> 7;
			s ^= s << 17;
			uint64_t b = s;
			for (int q = 0; q < 5 && i < n; q++, i++, b >>= 12) {
				int x = dst[i] + r->noise[b & (NOISE_TAB - 1)];
				dst[i] = (uint8_t)(x < 0 ? 0 : x > 255 ? 255 : x);
			}
		}
	}
}

wl_status wl_synth_render_at(wl_synth_renderer *r, double t_s, long k, uint8_t *rgb, int stride, wl_err *err)
{
	const wl_synth_scene *sc = r->sc;
	int np = sc->blur_samples < 1 ? 1 : sc->blur_samples > 32 ? 32 : sc->blur_samples;
	const wl_camera *cam = wl_synth_camera_at(sc, t_s);
	const uint8_t *bg = cam == &sc->cam ? r->bg8 : r->bg8_moved;
	if (stride < 3 * r->w)
		return wl_err_set(err, WL_EINVAL, "render: stride %d is less than 3 x width %d", stride,
		                  r->w);
	for (int v = 0; v < r->h; v++)
		memcpy(rgb + (size_t)v * stride, bg + (size_t)v * r->w * 3, (size_t)r->w * 3);
	for (int oi = 0; oi < sc->n_robots; oi++)
		draw_robot(r, cam, r->order[oi], t_s, np, rgb, stride);
	synth_draw_occluders(sc, r->ss, t_s, rgb, stride);
	add_glare(r, t_s, rgb, stride);
	synth_add_spots(sc, t_s, rgb, stride);
	if (sc->noise_sigma > 0)
		add_noise(r, k, rgb, stride);
	return WL_OK;
}

wl_status wl_synth_render_frame(wl_synth_renderer *r, long k, uint8_t *rgb, int stride, wl_err *err)
{
	return wl_synth_render_at(r, wl_synth_frame_time(r->sc, k), k, rgb, stride, err);
}
