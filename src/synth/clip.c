/*
 * clip.c: writes a rendered scene as an H.264 MP4 (decode/vwriter.h), its
 * truth table and the scene used; and single frames as PNG (cairo).  All
 * outputs are atomic: if any part fails, none of them is left behind.
 */
#define _POSIX_C_SOURCE 200809L
#include "synth/synth.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cairo.h>

#include "core/afile.h"
#include "core/csvio.h"
#include "decode/vwriter.h"

/* "<stem>.truth.csv" / "<stem>.scene.json" beside the clip. */
static char *side_path(const char *mp4, const char *suffix)
{
	size_t n = strlen(mp4);
	char *p;
	if (n >= 4 && strcmp(mp4 + n - 4, ".mp4") == 0)
		n -= 4;
	p = malloc(n + strlen(suffix) + 1);
	if (p) {
		memcpy(p, mp4, n);
		strcpy(p + n, suffix);
	}
	return p;
}

static void truth_rows(wl_csv_writer *cw, const wl_synth_scene *sc, long k, const int64_t pts)
{
	double t = (double)pts / sc->time_base_den;
	for (int i = 0; i < sc->n_robots; i++) {
		wl_synth_pose p;
		wl_synth_robot_pose(sc, i, t, &p);
		wl_csvw_num(cw, t, 6);
		wl_csvw_int(cw, k);
		wl_csvw_int(cw, sc->robots[i].id);
		wl_csvw_num(cw, p.x_m, 6);
		wl_csvw_num(cw, p.y_m, 6);
		wl_csvw_num(cw, p.heading_rad, 6);
		wl_csvw_int(cw, p.visible);
		wl_csvw_num(cw, wl_synth_visible_fraction(sc, i, t), 4);
		wl_csvw_num(cw, wl_synth_centre_time(sc, i, t), 6);
		wl_csvw_end(cw);
	}
}

wl_status wl_synth_write_clip(const wl_synth_scene *sc, const char *mp4_path, wl_synth_progress_fn fn,
                              void *ctx, wl_err *err)
{
	static const char *const header[] = {"t_s",         "frame",   "id",           "x_m",        "y_m",
	                                     "heading_rad", "visible", "visible_frac", "t_centre_s", NULL};
	char *truth = side_path(mp4_path, ".truth.csv"), *scene = side_path(mp4_path, ".scene.json");
	wl_synth_renderer *r = NULL;
	wl_vwriter *vw = NULL;
	wl_afile *af = NULL;
	wl_csv_writer cw;
	uint8_t *rgb = NULL;
	long n = wl_synth_frame_count(sc);
	int w = sc->cam.width_px, h = sc->cam.height_px, mp4_done = 0;
	wl_status st;
	wl_vwriter_opts o = {0};

	if (!truth || !scene || !(rgb = malloc((size_t)w * h * 3))) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory writing '%s'", mp4_path);
		goto out;
	}
	if ((st = wl_synth_renderer_create(sc, 2, &r, err)))
		goto out;
	o.width_px = w;
	o.height_px = h;
	o.time_base_den = sc->time_base_den;
	o.nominal_fps = sc->fps;
	o.rotation_deg = sc->rotation_deg;
	o.crf = sc->crf;
	o.bit_rate_bps = sc->bit_rate_bps;
	o.b_frames = sc->b_frames;
	o.threads = 0;
	if ((st = wl_afile_open(truth, &af, err)))
		goto out;
	if ((st = wl_vwriter_open(mp4_path, &o, &vw, err)))
		goto out;
	wl_csvw_init(&cw, wl_afile_fp(af));
	wl_csvw_header(&cw, header);
	for (long k = 0; k < n; k++) {
		int64_t pts = wl_synth_frame_pts(sc, k);
		double t = (double)pts / sc->time_base_den;
		if ((st = wl_synth_render_at(r, t, k, rgb, 3 * w, err)))
			goto out;
		if ((st = wl_vwriter_put_rgb(vw, rgb, 3 * w, t, err)))
			goto out;
		truth_rows(&cw, sc, k, pts);
		if (fn && fn(k + 1, n, ctx)) {
			st = wl_err_set(err, WL_EINVAL, "writing '%s': stopped at frame %ld of %ld", mp4_path,
			                k, n);
			goto out;
		}
	}
	st = wl_vwriter_close(vw, err);
	vw = NULL;
	if (st)
		goto out;
	mp4_done = 1;
	st = wl_afile_commit(af, err);
	af = NULL;
	if (st)
		goto out;
	st = wl_synth_save_scene(scene, sc, err);
	if (st)
		unlink(truth);
out:
	if (st && mp4_done)
		unlink(mp4_path);
	wl_vwriter_abort(vw);
	wl_afile_abort(af);
	wl_synth_renderer_destroy(r);
	free(rgb);
	free(truth);
	free(scene);
	return st;
}

static cairo_status_t png_write(void *closure, const unsigned char *data, unsigned int len)
{
	return fwrite(data, 1, len, closure) == len ? CAIRO_STATUS_SUCCESS : CAIRO_STATUS_WRITE_ERROR;
}

wl_status wl_synth_write_png(const wl_synth_scene *sc, long k, const char *png_path, wl_err *err)
{
	int w = sc->cam.width_px, h = sc->cam.height_px;
	uint8_t *rgb = malloc((size_t)w * h * 3);
	wl_synth_renderer *r = NULL;
	cairo_surface_t *s = NULL;
	wl_afile *af = NULL;
	wl_status st;
	if (!rgb) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory writing '%s'", png_path);
		goto out;
	}
	if ((st = wl_synth_renderer_create(sc, 2, &r, err)))
		goto out;
	if ((st = wl_synth_render_frame(r, k, rgb, 3 * w, err)))
		goto out;
	s = cairo_image_surface_create(CAIRO_FORMAT_RGB24, w, h);
	if (cairo_surface_status(s) != CAIRO_STATUS_SUCCESS) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory writing '%s'", png_path);
		goto out;
	}
	cairo_surface_flush(s);
	{
		unsigned char *d = cairo_image_surface_get_data(s);
		int ds = cairo_image_surface_get_stride(s);
		for (int v = 0; v < h; v++) {
			uint32_t *row = (uint32_t *)(void *)(d + (size_t)v * ds);
			const uint8_t *src = rgb + (size_t)v * w * 3;
			for (int u = 0; u < w; u++)
				row[u] = (uint32_t)src[3 * u] << 16 | (uint32_t)src[3 * u + 1] << 8 |
				         src[3 * u + 2];
		}
	}
	cairo_surface_mark_dirty(s);
	if ((st = wl_afile_open(png_path, &af, err)))
		goto out;
	if (cairo_surface_write_to_png_stream(s, png_write, wl_afile_fp(af)) != CAIRO_STATUS_SUCCESS) {
		st = wl_err_set(err, WL_EIO, "cannot write '%s': PNG encoding failed", png_path);
		goto out;
	}
	st = wl_afile_commit(af, err);
	af = NULL;
out:
	wl_afile_abort(af);
	if (s)
		cairo_surface_destroy(s);
	wl_synth_renderer_destroy(r);
	free(rgb);
	return st;
}
