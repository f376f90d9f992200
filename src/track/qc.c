/*
 * qc.c: the tracker's quality-control pictures (track.h): the trail PNG
 * (the first frame with each robot's path) and the overlay clip (every
 * frame with pose, id, trail and the tank outline), drawn with cairo in
 * coded pixels.  Trails are bounded: when a trail fills up, every other
 * point is dropped, so memory stays flat over long clips.
 */
#include "track/track.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cairo.h>

#include "core/afile.h"
#include "core/angle.h"
#include "decode/decode.h"
#include "decode/vwriter.h"

#define TRAIL_MAX 4096

typedef struct {
	int id, n, step, skip;
	float (*pt)[2];
} trail;

struct wl_qc {
	char *trail_png, *overlay_mp4;
	wl_calib cal;
	int w, h, rot;
	double fps;
	cairo_surface_t *first; /* the first frame, for the trail picture */
	cairo_surface_t *frame; /* the overlay's drawing surface */
	wl_vwriter *vw;
	uint8_t *rgb_out;
	int n;
	trail tr[WL_TRACK_MAX_ROBOTS];
};

static char *dup_or_null(const char *s)
{
	char *d;
	if (!s)
		return NULL;
	d = malloc(strlen(s) + 1);
	if (d)
		strcpy(d, s);
	return d;
}

wl_status wl_qc_create(const char *trail_png, const char *overlay_mp4, const wl_calib *cal, int width_px,
                       int height_px, int rotation_deg, double fps_hint, wl_qc **out, wl_err *err)
{
	wl_qc *qc = calloc(1, sizeof *qc);
	*out = NULL;
	if (!qc)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the QC pictures");
	qc->trail_png = dup_or_null(trail_png);
	qc->overlay_mp4 = dup_or_null(overlay_mp4);
	qc->cal = *cal;
	qc->w = width_px;
	qc->h = height_px;
	qc->rot = rotation_deg;
	qc->fps = fps_hint > 0 ? fps_hint : 30.0;
	if ((trail_png && !qc->trail_png) || (overlay_mp4 && !qc->overlay_mp4)) {
		wl_qc_destroy(qc);
		return wl_err_set(err, WL_ENOMEM, "out of memory for the QC pictures");
	}
	*out = qc;
	return WL_OK;
}

void wl_qc_destroy(wl_qc *qc)
{
	if (!qc)
		return;
	if (qc->first)
		cairo_surface_destroy(qc->first);
	if (qc->frame)
		cairo_surface_destroy(qc->frame);
	wl_vwriter_abort(qc->vw);
	for (int i = 0; i < qc->n; i++)
		free(qc->tr[i].pt);
	free(qc->rgb_out);
	free(qc->trail_png);
	free(qc->overlay_mp4);
	free(qc);
}

/* copies the frame (RGB if there is one, else grey) into a cairo surface */
static void fill_surface(cairo_surface_t *s, const wl_track_image *img)
{
	unsigned char *d;
	int ds;
	cairo_surface_flush(s);
	d = cairo_image_surface_get_data(s);
	ds = cairo_image_surface_get_stride(s);
	for (int y = 0; y < img->height_px; y++) {
		uint32_t *row = (uint32_t *)(void *)(d + (size_t)y * ds);
		for (int x = 0; x < img->width_px; x++) {
			uint32_t r, g, b;
			if (img->rgb) {
				const uint8_t *p = img->rgb + (size_t)y * img->rgb_stride + 3 * (size_t)x;
				r = p[0];
				g = p[1];
				b = p[2];
			} else {
				r = g = b = img->luma[(size_t)y * img->luma_stride + x];
			}
			row[x] = 0xff000000u | r << 16 | g << 8 | b;
		}
	}
	cairo_surface_mark_dirty(s);
}

static void colour_of(int i, double *r, double *g, double *b)
{
	static const double pal[8][3] = {{1, 0.2, 0.2}, {0.2, 0.8, 1}, {1, 0.85, 0},  {0.3, 1, 0.3},
	                                 {1, 0.4, 1},   {1, 0.6, 0.2}, {0.6, 0.6, 1}, {1, 1, 1}};
	*r = pal[i % 8][0];
	*g = pal[i % 8][1];
	*b = pal[i % 8][2];
}

static trail *trail_of(wl_qc *qc, int id)
{
	for (int i = 0; i < qc->n; i++)
		if (qc->tr[i].id == id)
			return &qc->tr[i];
	if (qc->n >= WL_TRACK_MAX_ROBOTS)
		return NULL;
	qc->tr[qc->n].id = id;
	qc->tr[qc->n].step = 1;
	return &qc->tr[qc->n++];
}

static int trail_add(trail *t, double u, double v)
{
	if (!t->pt && !(t->pt = malloc(TRAIL_MAX * sizeof *t->pt)))
		return 0;
	if (t->skip++ % t->step)
		return 1;
	if (t->n == TRAIL_MAX) {
		for (int i = 0; i < TRAIL_MAX / 2; i++) {
			t->pt[i][0] = t->pt[2 * i][0];
			t->pt[i][1] = t->pt[2 * i][1];
		}
		t->n = TRAIL_MAX / 2;
		t->step *= 2;
	}
	t->pt[t->n][0] = (float)u;
	t->pt[t->n][1] = (float)v;
	t->n++;
	return 1;
}

/* a tank point to coded pixels through the calibration's camera */
static int tank_to_coded(const wl_qc *qc, double x, double y, double z, double *u, double *v)
{
	double X[3] = {x, y, z};
	if (!wl_camera_project_water(&qc->cal.cam, X, u, v))
		return 0;
	if (qc->cal.displayed && qc->rot != 0)
		wl_orient_to_coded(qc->rot, qc->w, qc->h, *u, *v, u, v);
	return 1;
}

static void draw_trails(wl_qc *qc, cairo_t *cr, double lw)
{
	cairo_set_line_width(cr, lw);
	cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
	for (int i = 0; i < qc->n; i++) {
		const trail *t = &qc->tr[i];
		double r, g, b;
		if (t->n == 0)
			continue;
		colour_of(i, &r, &g, &b);
		cairo_set_source_rgb(cr, r, g, b);
		/* pixel centres at integer coordinates: cairo's pixel centre is at +0.5 */
		cairo_move_to(cr, t->pt[0][0] + 0.5, t->pt[0][1] + 0.5);
		for (int k = 1; k < t->n; k++)
			cairo_line_to(cr, t->pt[k][0] + 0.5, t->pt[k][1] + 0.5);
		cairo_stroke(cr);
	}
}

static void draw_outline(wl_qc *qc, cairo_t *cr)
{
	if (qc->cal.n_outline < 3)
		return;
	cairo_set_source_rgb(cr, 0.2, 1.0, 0.2);
	cairo_set_line_width(cr, 2.0);
	for (int k = 0; k <= qc->cal.n_outline; k++) {
		const double *p = qc->cal.outline_m[k % qc->cal.n_outline];
		double u, v;
		if (!tank_to_coded(qc, p[0], p[1], 0.0, &u, &v))
			continue;
		if (k == 0)
			cairo_move_to(cr, u + 0.5, v + 0.5);
		else
			cairo_line_to(cr, u + 0.5, v + 0.5);
	}
	cairo_stroke(cr);
}

/* digits as seven line segments: no font (and no font library state) needed */
static void draw_number(cairo_t *cr, double x, double y, double hgt, int value)
{
	static const unsigned char seg[10] = {0x3f, 0x06, 0x5b, 0x4f, 0x66, 0x6d, 0x7d, 0x07, 0x7f, 0x6f};
	/* segments a..g as (x0, y0, x1, y1) in a 1 x 2 cell, y down */
	static const double sd[7][4] = {{0, 0, 1, 0}, {1, 0, 1, 1}, {1, 1, 1, 2}, {0, 2, 1, 2},
	                                {0, 1, 0, 2}, {0, 0, 0, 1}, {0, 1, 1, 1}};
	char buf[16];
	double s = hgt / 2.0;
	int n = snprintf(buf, sizeof buf, "%d", value < 0 ? 0 : value);
	for (int i = 0; i < n; i++) {
		unsigned m = seg[buf[i] - '0'];
		double ox = x + i * 1.6 * s;
		for (int k = 0; k < 7; k++)
			if (m & (1u << k)) {
				cairo_move_to(cr, ox + sd[k][0] * s, y + sd[k][1] * s);
				cairo_line_to(cr, ox + sd[k][2] * s, y + sd[k][3] * s);
			}
	}
	cairo_stroke(cr);
}

static void draw_poses(wl_qc *qc, cairo_t *cr, const wl_tracker *tr, const wl_track_obs *obs, int n)
{
	for (int i = 0; i < n; i++) {
		const wl_track_obs *o = &obs[i];
		double r, g, b, rad, u2, v2, x2, y2;
		int ti;
		if (!o->ok)
			continue;
		ti = (int)(trail_of(qc, o->id) - qc->tr);
		colour_of(ti, &r, &g, &b);
		cairo_set_source_rgb(cr, r, g, b);
		cairo_set_line_width(cr, 2.0);
		rad = o->size_px > 4 ? 0.75 * o->size_px : 6.0;
		cairo_arc(cr, o->u_px + 0.5, o->v_px + 0.5, rad, 0, 2 * WL_PI);
		cairo_stroke(cr);
		if (!isnan(o->heading_rad)) {
			/* a point ahead on the marker plane, back to pixels */
			double ahead_m = 0.05;
			x2 = o->x_m + ahead_m * cos(o->heading_rad);
			y2 = o->y_m + ahead_m * sin(o->heading_rad);
			if (tank_to_coded(qc, x2, y2, qc->cal.plane_height_m, &u2, &v2)) {
				double du = u2 - o->u_px, dv = v2 - o->v_px, l = hypot(du, dv);
				if (l > 0) {
					cairo_move_to(cr, o->u_px + 0.5, o->v_px + 0.5);
					cairo_line_to(cr, o->u_px + 0.5 + 2 * rad * du / l,
					              o->v_px + 0.5 + 2 * rad * dv / l);
					cairo_stroke(cr);
				}
			}
		}
		draw_number(cr, o->u_px + rad + 4, o->v_px - rad - 16, 16.0, o->id);
	}
	(void)tr;
}

wl_status wl_qc_frame(wl_qc *qc, const wl_tracker *tr, const wl_track_image *img, const wl_track_obs *obs,
                      int n, wl_err *err)
{
	wl_status st;
	if (qc->trail_png && !qc->first) {
		qc->first = cairo_image_surface_create(CAIRO_FORMAT_RGB24, qc->w, qc->h);
		if (cairo_surface_status(qc->first) != CAIRO_STATUS_SUCCESS)
			return wl_err_set(err, WL_ENOMEM, "out of memory for the trail picture");
		fill_surface(qc->first, img);
	}
	for (int i = 0; i < n; i++) {
		trail *t;
		if (!obs[i].ok)
			continue;
		if (!(t = trail_of(qc, obs[i].id)) || !trail_add(t, obs[i].u_px, obs[i].v_px))
			return wl_err_set(err, WL_ENOMEM, "out of memory for the trails");
	}
	if (!qc->overlay_mp4)
		return WL_OK;
	if (!img->rgb)
		return wl_err_set(err, WL_EINVAL, "the overlay needs RGB frames");
	if (!qc->vw) {
		wl_vwriter_opts vo;
		memset(&vo, 0, sizeof vo);
		vo.width_px = qc->w & ~1;
		vo.height_px = qc->h & ~1;
		vo.time_base_den = 90000;
		vo.nominal_fps = qc->fps;
		vo.rotation_deg = qc->rot;
		vo.crf = 23;
		vo.b_frames = -1;
		vo.threads = 0;
		if ((st = wl_vwriter_open(qc->overlay_mp4, &vo, &qc->vw, err)) != WL_OK)
			return st;
		qc->frame = cairo_image_surface_create(CAIRO_FORMAT_RGB24, qc->w, qc->h);
		qc->rgb_out = malloc((size_t)qc->w * qc->h * 3);
		if (cairo_surface_status(qc->frame) != CAIRO_STATUS_SUCCESS || !qc->rgb_out)
			return wl_err_set(err, WL_ENOMEM, "out of memory for the overlay");
	}
	fill_surface(qc->frame, img);
	{
		cairo_t *cr = cairo_create(qc->frame);
		unsigned char *d;
		int ds;
		draw_outline(qc, cr);
		draw_trails(qc, cr, 1.5);
		draw_poses(qc, cr, tr, obs, n);
		cairo_destroy(cr);
		cairo_surface_flush(qc->frame);
		d = cairo_image_surface_get_data(qc->frame);
		ds = cairo_image_surface_get_stride(qc->frame);
		for (int y = 0; y < qc->h; y++) {
			const uint32_t *row = (const uint32_t *)(const void *)(d + (size_t)y * ds);
			uint8_t *o = qc->rgb_out + (size_t)y * qc->w * 3;
			for (int x = 0; x < qc->w; x++) {
				o[3 * x] = (uint8_t)(row[x] >> 16);
				o[3 * x + 1] = (uint8_t)(row[x] >> 8);
				o[3 * x + 2] = (uint8_t)row[x];
			}
		}
	}
	return wl_vwriter_put_rgb(qc->vw, qc->rgb_out, qc->w * 3, img->t_s, err);
}

static cairo_status_t png_write(void *closure, const unsigned char *data, unsigned int len)
{
	return fwrite(data, 1, len, closure) == len ? CAIRO_STATUS_SUCCESS : CAIRO_STATUS_WRITE_ERROR;
}

static wl_status write_trail(wl_qc *qc, wl_err *err)
{
	wl_afile *af;
	wl_status st;
	cairo_t *cr;
	if (!qc->first)
		return wl_err_set(err, WL_ETRACK, "%s: no frame to draw the trails on", qc->trail_png);
	cr = cairo_create(qc->first);
	draw_outline(qc, cr);
	draw_trails(qc, cr, 3.0);
	cairo_destroy(cr);
	if ((st = wl_afile_open(qc->trail_png, &af, err)) != WL_OK)
		return st;
	if (cairo_surface_write_to_png_stream(qc->first, png_write, wl_afile_fp(af)) !=
	    CAIRO_STATUS_SUCCESS) {
		wl_afile_abort(af);
		return wl_err_set(err, WL_EIO, "%s: cannot write the PNG: check the disk", qc->trail_png);
	}
	return wl_afile_commit(af, err);
}

wl_status wl_qc_finish(wl_qc *qc, wl_err *err)
{
	wl_status st;
	if (qc->trail_png && (st = write_trail(qc, err)) != WL_OK)
		return st;
	if (qc->vw) {
		wl_vwriter *vw = qc->vw;
		qc->vw = NULL;
		if ((st = wl_vwriter_close(vw, err)) != WL_OK)
			return st;
	}
	return WL_OK;
}
