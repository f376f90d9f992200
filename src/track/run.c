/*
 * run.c: a whole tracking run (track.h, wl_track_run): a decoder thread
 * fills a small ring of reusable frame buffers (a bounded queue), the
 * calling thread tracks them and streams RAW.csv; decoding and tracking
 * overlap.  Memory is flat: queue_frames buffers, one first-frame copy for
 * the trail picture, and trails of bounded length.
 *
 * In tag mode, once every robot is tracked, the decoder thread copies only
 * the region the tracker asks for (its windows, grown by the motion over
 * the queue's length: wl_tracker_roi); whole frames again when a full-frame
 * search may be needed.
 */
#define _POSIX_C_SOURCE 200809L
#include "track/track.h"

#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/csvio.h"
#include "decode/decode.h"

typedef struct {
	uint8_t *luma, *rgb;
	int w, h;
	double t_s;
	int64_t index;
	int corrupt;
	int roi[4]; /* the part copied; roi[2] == 0: all */
} slot;

typedef struct {
	pthread_mutex_t m;
	pthread_cond_t cv;
	slot *slots;
	int n, head, count;
	int eof, stop;
	wl_status st;
	wl_err err;
	wl_decoder *dec;
	int want_rgb;
	int64_t damaged;
	int roi[4]; /* what to copy next (set by the tracking thread) */
} queue;

static void copy_plane(uint8_t *dst, int dst_stride, const uint8_t *src, int stride, int row_bytes, int h)
{
	for (int y = 0; y < h; y++)
		memcpy(dst + (size_t)y * dst_stride, src + (size_t)y * stride, (size_t)row_bytes);
}

static void *decode_main(void *arg)
{
	queue *q = arg;
	for (;;) {
		const wl_frame *f = NULL;
		wl_err e;
		wl_status st;
		slot *s;
		pthread_mutex_lock(&q->m);
		while (q->count == q->n && !q->stop)
			pthread_cond_wait(&q->cv, &q->m);
		if (q->stop) {
			pthread_mutex_unlock(&q->m);
			break;
		}
		s = &q->slots[(q->head + q->count) % q->n];
		memcpy(s->roi, q->roi, sizeof s->roi);
		pthread_mutex_unlock(&q->m);
		wl_err_clear(&e);
		st = wl_decoder_next(q->dec, &f, &e);
		if (st == WL_OK && f &&
		    (f->width_px != s->w || f->height_px != s->h || (q->want_rgb && !f->rgb))) {
			st = wl_err_set(&e, WL_EDECODE,
			                "frame %lld: size %dx%d differs from the clip's %dx%d",
			                (long long)f->index, f->width_px, f->height_px, s->w, s->h);
		}
		if (st != WL_OK || !f) {
			pthread_mutex_lock(&q->m);
			q->st = st;
			q->err = e;
			q->eof = 1;
			pthread_cond_broadcast(&q->cv);
			pthread_mutex_unlock(&q->m);
			break;
		}
		if (s->roi[2] > 0) {
			/* the region only, at its place in the buffer (stride w) */
			int x0 = s->roi[0], y0 = s->roi[1];
			copy_plane(s->luma + (size_t)y0 * s->w + x0, s->w,
			           f->luma + (size_t)y0 * f->luma_stride + x0, f->luma_stride, s->roi[2],
			           s->roi[3]);
		} else {
			copy_plane(s->luma, s->w, f->luma, f->luma_stride, s->w, s->h);
		}
		if (q->want_rgb)
			copy_plane(s->rgb, 3 * s->w, f->rgb, f->rgb_stride, 3 * s->w, s->h);
		s->t_s = f->t_s;
		s->index = f->index;
		s->corrupt = f->corrupt;
		pthread_mutex_lock(&q->m);
		if (f->corrupt)
			q->damaged++;
		q->count++;
		pthread_cond_broadcast(&q->cv);
		pthread_mutex_unlock(&q->m);
	}
	return NULL;
}

static slot *queue_front(queue *q)
{
	slot *s = NULL;
	pthread_mutex_lock(&q->m);
	while (q->count == 0 && !q->eof)
		pthread_cond_wait(&q->cv, &q->m);
	if (q->count > 0)
		s = &q->slots[q->head];
	pthread_mutex_unlock(&q->m);
	return s;
}

static void queue_pop(queue *q)
{
	pthread_mutex_lock(&q->m);
	q->head = (q->head + 1) % q->n;
	q->count--;
	pthread_cond_broadcast(&q->cv);
	pthread_mutex_unlock(&q->m);
}

static void queue_stop(queue *q)
{
	pthread_mutex_lock(&q->m);
	q->stop = 1;
	pthread_cond_broadcast(&q->cv);
	pthread_mutex_unlock(&q->m);
}

static void free_slots(queue *q)
{
	for (int i = 0; q->slots && i < q->n; i++) {
		free(q->slots[i].luma);
		free(q->slots[i].rgb);
	}
	free(q->slots);
}

static wl_status alloc_slots(queue *q, int n, int w, int h, int rgb, wl_err *err)
{
	q->n = n;
	q->slots = calloc((size_t)n, sizeof *q->slots);
	if (!q->slots)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the frame queue");
	for (int i = 0; i < n; i++) {
		slot *s = &q->slots[i];
		s->w = w;
		s->h = h;
		s->luma = malloc((size_t)w * h);
		s->rgb = rgb ? malloc((size_t)w * h * 3) : NULL;
		if (!s->luma || (rgb && !s->rgb))
			return wl_err_set(err, WL_ENOMEM,
			                  "out of memory for the frame queue (%d frames of %dx%d)", n, w, h);
	}
	return WL_OK;
}

/* One warning at the end of a run, the most important: robots past the
 * limit, a damaged clip, frames flagged damaged, HDR video in colour mode. */
static void warn_end(const wl_track_run_opts *ro, const wl_track_opts *opts, const wl_decoder *dec,
                     const wl_track_summary *sum)
{
	const wl_video_info *info = wl_decoder_info(dec);
	const char *stage = "track";
	if (sum->stats.over_limit > 0) {
		wl_diag_warn(ro->diag, stage,
		             "%s: more than %d tag ids seen: %lld detections of new ids (the first id %d) "
		             "were left out; "
		             "list the robots with --ids or --robots",
		             ro->clip, WL_TRACK_MAX_ROBOTS, (long long)sum->stats.over_limit,
		             sum->stats.first_over_limit_id);
	} else if (wl_decoder_damage_count(dec) > 0) {
		/* packets lost, a cut file: not only frames flagged corrupt */
		int nd = 0;
		const wl_damage *d = wl_decoder_damage(dec, &nd);
		char tb[WL_NUMBUF];
		wl_diag_warn(ro->diag, stage,
		             "%s: damaged clip: %lld problem%s, the first at frame %lld, %s s: %s (%lld "
		             "frames flagged); "
		             "see wakeline probe",
		             ro->clip, (long long)wl_decoder_damage_count(dec),
		             wl_decoder_damage_count(dec) > 1 ? "s" : "",
		             nd ? (long long)d[0].frame_index : -1LL,
		             nd && isfinite(d[0].t_s) ? wl_fmt_fixed(tb, d[0].t_s, 3) : "?",
		             nd ? d[0].what : "?", (long long)sum->damaged);
	} else if (sum->damaged > 0) {
		wl_diag_warn(ro->diag, stage,
		             "%lld frames were flagged as damaged by the decoder; their poses may be off",
		             (long long)sum->damaged);
	} else if (opts->mode == WL_TRACK_COLOUR && info->bit_depth > 8) {
		wl_diag_warn(ro->diag, stage,
		             "%s is %d-bit (HDR?) video: colour ranges need an SDR recording or tone-mapping",
		             ro->clip, info->bit_depth);
	}
}

void wl_track_put_rows(wl_raw_writer *w, double t_s, int64_t frame, const wl_track_obs *obs, int n)
{
	for (int i = 0; i < n; i++) {
		const wl_track_obs *o = &obs[i];
		wl_raw_row r = {t_s,
		                frame,
		                o->id,
		                o->ok ? WL_RAW_OK : WL_RAW_LOST,
		                o->u_px,
		                o->v_px,
		                o->x_m,
		                o->y_m,
		                o->heading_rad,
		                o->margin,
		                o->size_px,
		                o->heading_source,
		                0};
		wl_raw_put(w, &r);
	}
}

wl_status wl_track_run(const wl_track_run_opts *ro, const wl_track_opts *opts, const wl_calib *cal,
                       const char *cal_path, wl_track_summary *sum, wl_err *err)
{
	wl_decoder *dec = NULL;
	wl_tracker *tr = NULL;
	wl_raw_writer *raw = NULL;
	wl_qc *qc = NULL;
	queue q;
	pthread_t th;
	int started = 0, want_rgb, nq;
	double lookahead_s, total;
	const wl_video_info *info;
	wl_status st;
	memset(sum, 0, sizeof *sum);
	memset(&q, 0, sizeof q);
	if ((st = wl_track_opts_check(opts, err)))
		return st;
	pthread_mutex_init(&q.m, NULL);
	pthread_cond_init(&q.cv, NULL);
	want_rgb = opts->mode == WL_TRACK_COLOUR || ro->overlay_mp4;
	if ((st = wl_decoder_open(ro->clip, want_rgb ? WL_DECODE_RGB : 0, ro->decode_threads, &dec, err)) !=
	    WL_OK)
		goto out;
	info = wl_decoder_info(dec);
	total = info->frames_hint > 0                        ? (double)info->frames_hint
	        : info->duration_s > 0 && info->fps_hint > 0 ? floor(info->duration_s * info->fps_hint + 0.5)
	                                                     : -1;
	if ((st = wl_tracker_create(opts, cal, cal_path, info->width_px, info->height_px, info->rotation_deg,
	                            &tr, err)) != WL_OK)
		goto out;
	if (ro->trail_png || ro->overlay_mp4) {
		if ((st = wl_qc_create(ro->trail_png, ro->overlay_mp4, cal, info->width_px, info->height_px,
		                       info->rotation_deg, info->fps_hint, &qc, err)) != WL_OK)
			goto out;
	}
	if ((st = wl_raw_open(ro->raw_path, &raw, err)) != WL_OK)
		goto out;
	nq = ro->queue_frames >= 2 ? ro->queue_frames : 4;
	if ((st = alloc_slots(&q, nq, info->width_px, info->height_px, want_rgb, err)) != WL_OK)
		goto out;
	q.dec = dec;
	q.want_rgb = want_rgb;
	/* frames already queued (or being decoded) when a new region is set */
	lookahead_s = (nq + 2) / (info->fps_hint > 0 ? info->fps_hint : 30.0);
	if (pthread_create(&th, NULL, decode_main, &q) != 0) {
		st = wl_err_set(err, WL_ENOMEM, "cannot start the decoder thread");
		goto out;
	}
	started = 1;
	for (;;) {
		slot *s = queue_front(&q);
		wl_track_image img;
		const wl_track_obs *obs;
		int n;
		if (!s)
			break;
		img.width_px = s->w;
		img.height_px = s->h;
		img.luma = s->luma;
		img.luma_stride = s->w;
		img.rgb = s->rgb;
		img.rgb_stride = 3 * s->w;
		img.t_s = s->t_s;
		img.index = s->index;
		memcpy(img.roi, s->roi, sizeof img.roi);
		if ((st = wl_tracker_frame(tr, &img, &obs, &n, err)) != WL_OK)
			goto out;
		wl_track_put_rows(raw, s->t_s, s->index, obs, n);
		if (qc && (st = wl_qc_frame(qc, tr, &img, obs, n, err)) != WL_OK)
			goto out;
		sum->frames++;
		sum->rows += n;
		for (int i = 0; i < n; i++)
			sum->ok_rows += obs[i].ok;
		if (n > sum->n_robots)
			sum->n_robots = n;
		if (!want_rgb) {
			int roi[4];
			if (wl_tracker_roi(tr, lookahead_s, roi))
				roi[2] = roi[3] = 0;
			pthread_mutex_lock(&q.m);
			memcpy(q.roi, roi, sizeof roi);
			pthread_mutex_unlock(&q.m);
		}
		queue_pop(&q);
		wl_diag_progress(ro->diag, "track", (double)sum->frames, total, img.t_s);
	}
	if (q.st != WL_OK) {
		st = q.st;
		if (err)
			*err = q.err;
		goto out;
	}
	if (sum->frames == 0) {
		st = wl_err_set(err, WL_EDECODE, "%s: no frames decoded: check the clip with ffprobe",
		                ro->clip);
		goto out;
	}
	if (qc && (st = wl_qc_finish(qc, err)) != WL_OK)
		goto out;
	if ((st = wl_raw_commit(raw, err)) != WL_OK) {
		raw = NULL;
		goto out;
	}
	raw = NULL;
	sum->damaged = q.damaged;
	sum->stats = *wl_tracker_stats(tr);
	warn_end(ro, opts, dec, sum);
out:
	if (started) {
		queue_stop(&q);
		pthread_join(th, NULL);
	}
	wl_raw_abort(raw);
	wl_qc_destroy(qc);
	wl_tracker_destroy(tr);
	wl_decoder_destroy(dec);
	free_slots(&q);
	pthread_mutex_destroy(&q.m);
	pthread_cond_destroy(&q.cv);
	return st;
}
