/*
 * vwriter.c: H.264 in MP4 through libavcodec (libx264) and libavformat (see
 * vwriter.h).  Used by the renderer (src/synth) and the quality-control
 * overlay.  RGB24 frames are converted to yuv420p (limited range, BT.601,
 * what players assume for SD/HD H.264 without colour tags) by swscale.
 *
 * Timing: the codec and the stream use the time base 1/time_base_den and the
 * MP4 track timescale is set to time_base_den too, so a presentation time
 * that is a multiple of the time base is stored exactly (variable frame
 * rates included).  The file is written to an afile temporary name and
 * renamed on close.
 */
#include "decode/vwriter.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "decode/av.h" /* FFmpeg, loaded on first use */

#include "core/afile.h"

struct wl_vwriter {
	wl_vwriter_opts o;
	char *path;
	wl_afile *af;
	AVFormatContext *oc;
	AVCodecContext *c;
	AVStream *st;
	AVFrame *frame;
	AVPacket *pkt;
	struct SwsContext *sws;
	int64_t last_pts;
	long nframes;
	int header_written;
};

static wl_status av_fail(wl_err *err, int rc, const char *path, const char *what)
{
	char buf[AV_ERROR_MAX_STRING_SIZE] = "";
	av_strerror(rc, buf, sizeof buf);
	return wl_err_set(err, rc == AVERROR(ENOSPC) ? WL_EIO : WL_EDECODE,
	                  "cannot write video '%s': %s: %s%s", path, what, buf,
	                  rc == AVERROR(ENOSPC) ? ": free some space and run again" : "");
}

static void vw_free(wl_vwriter *w)
{
	if (!w)
		return;
	sws_freeContext(w->sws);
	av_packet_free(&w->pkt);
	av_frame_free(&w->frame);
	avcodec_free_context(&w->c);
	if (w->oc) {
		if (w->oc->pb)
			avio_closep(&w->oc->pb);
		avformat_free_context(w->oc);
	}
	wl_afile_abort(w->af); /* no-op once committed (then af is NULL) */
	free(w->path);
	free(w);
}

static wl_status check_opts(const char *path, const wl_vwriter_opts *o, wl_err *err)
{
	if (o->width_px <= 0 || o->height_px <= 0 || o->width_px % 2 || o->height_px % 2)
		return wl_err_set(
		        err, WL_EINVAL,
		        "cannot write video '%s': size %dx%d: width and height must be even and positive",
		        path, o->width_px, o->height_px);
	if (o->time_base_den <= 0)
		return wl_err_set(err, WL_EINVAL,
		                  "cannot write video '%s': time_base_den %d must be positive", path,
		                  o->time_base_den);
	if (!(o->nominal_fps > 0) || !isfinite(o->nominal_fps))
		return wl_err_set(err, WL_EINVAL, "cannot write video '%s': nominal_fps must be positive",
		                  path);
	if (o->rotation_deg % 90 != 0 || o->rotation_deg < 0 || o->rotation_deg >= 360)
		return wl_err_set(err, WL_EINVAL,
		                  "cannot write video '%s': rotation %d: use 0, 90, 180 or 270", path,
		                  o->rotation_deg);
	if (o->crf < 0 || o->crf > 51)
		return wl_err_set(err, WL_EINVAL, "cannot write video '%s': crf %d: use 0..51", path, o->crf);
	return WL_OK;
}

/* Stores the display matrix.  FFmpeg 5.1's display.h: av_display_rotation_set
 * builds a CLOCKWISE rotation while av_display_rotation_get (what ffprobe
 * prints and the decoder reads) returns the COUNTER-CLOCKWISE angle; so a
 * counter-clockwise rotation_deg is stored as set(-rotation_deg).  Checked
 * with ffprobe against `ffmpeg -metadata:s:v:0 rotate=90` (tests/data/references.md):
 * both report rotation 90 (tests/e2e/0900-synth-clip.sh). */
static wl_status add_rotation(wl_vwriter *w, wl_err *err)
{
	uint8_t *m;
	if (w->o.rotation_deg == 0)
		return WL_OK;
	m = av_malloc(9 * sizeof(int32_t));
	if (!m)
		return wl_err_set(err, WL_ENOMEM, "cannot write video '%s': out of memory", w->path);
	av_display_rotation_set((int32_t *)m, -(double)w->o.rotation_deg);
	if (av_stream_add_side_data(w->st, AV_PKT_DATA_DISPLAYMATRIX, m, 9 * sizeof(int32_t)) < 0) {
		av_free(m);
		return wl_err_set(err, WL_ENOMEM, "cannot write video '%s': cannot store the rotation",
		                  w->path);
	}
	return WL_OK;
}

static wl_status open_codec(wl_vwriter *w, wl_err *err)
{
	const AVCodec *codec = avcodec_find_encoder_by_name("libx264");
	AVDictionary *copts = NULL;
	char buf[32];
	int rc;
	if (!codec)
		return wl_err_set(err, WL_EDECODE,
		                  "cannot write video '%s': FFmpeg has no libx264 encoder: install "
		                  "libavcodec with x264",
		                  w->path);
	w->c = avcodec_alloc_context3(codec);
	if (!w->c)
		return wl_err_set(err, WL_ENOMEM, "cannot write video '%s': out of memory", w->path);
	w->c->width = w->o.width_px;
	w->c->height = w->o.height_px;
	w->c->pix_fmt = AV_PIX_FMT_YUV420P;
	w->c->time_base = (AVRational){1, w->o.time_base_den};
	w->c->framerate = av_d2q(w->o.nominal_fps, 100000);
	w->c->gop_size = (int)lround(2 * w->o.nominal_fps) > 1 ? (int)lround(2 * w->o.nominal_fps) : 12;
	w->c->max_b_frames = w->o.b_frames < 0 ? 3 : w->o.b_frames;
	w->c->thread_count = w->o.threads;
	w->c->color_range = AVCOL_RANGE_MPEG;
	w->c->colorspace = AVCOL_SPC_BT470BG;
	w->c->color_primaries = AVCOL_PRI_BT709;
	w->c->color_trc = AVCOL_TRC_BT709;
	if (w->oc->oformat->flags & AVFMT_GLOBALHEADER)
		w->c->flags |= AV_CODEC_FLAG_GLOBAL_HEADER;
	av_dict_set(&copts, "preset", "veryfast", 0);
	/* the library never prints: x264's banner and statistics off */
	av_dict_set(&copts, "x264-params", "log=-1", 0);
	if (w->o.bit_rate_bps > 0) {
		w->c->bit_rate = w->o.bit_rate_bps;
	} else {
		snprintf(buf, sizeof buf, "%d", w->o.crf > 0 ? w->o.crf : 20);
		av_dict_set(&copts, "crf", buf, 0);
	}
	rc = avcodec_open2(w->c, codec, &copts);
	av_dict_free(&copts);
	if (rc < 0)
		return av_fail(err, rc, w->path, "opening libx264");
	return WL_OK;
}

wl_status wl_vwriter_open(const char *path, const wl_vwriter_opts *opts, wl_vwriter **out, wl_err *err)
{
	wl_vwriter *w = NULL;
	AVDictionary *mopts = NULL;
	wl_status st;
	char buf[32];
	int rc;

	*out = NULL;
	if ((st = wl_av_load(err)) != WL_OK)
		return wl_err_prefix(err, st, "%s", path);
	/* FFmpeg logs to stderr by default; the library must not print, and
	 * every failure comes back as a message, so only errors remain */
	if (av_log_get_level() > AV_LOG_ERROR)
		av_log_set_level(AV_LOG_ERROR);
	if ((st = check_opts(path, opts, err)))
		return st;
	w = calloc(1, sizeof *w);
	if (!w || !(w->path = malloc(strlen(path) + 1))) {
		free(w);
		return wl_err_set(err, WL_ENOMEM, "cannot write video '%s': out of memory", path);
	}
	memcpy(w->path, path, strlen(path) + 1);
	w->o = *opts;
	w->last_pts = INT64_MIN;
	if ((st = wl_afile_open(path, &w->af, err)))
		goto fail;
	rc = avformat_alloc_output_context2(&w->oc, NULL, "mp4", wl_afile_tmp_path(w->af));
	if (rc < 0 || !w->oc) {
		st = av_fail(err, rc, path, "creating the MP4 muxer");
		goto fail;
	}
	if ((st = open_codec(w, err)))
		goto fail;
	w->st = avformat_new_stream(w->oc, NULL);
	if (!w->st) {
		st = wl_err_set(err, WL_ENOMEM, "cannot write video '%s': out of memory", path);
		goto fail;
	}
	w->st->time_base = w->c->time_base;
	w->st->avg_frame_rate = w->c->framerate;
	if ((rc = avcodec_parameters_from_context(w->st->codecpar, w->c)) < 0) {
		st = av_fail(err, rc, path, "copying codec parameters");
		goto fail;
	}
	if ((st = add_rotation(w, err)))
		goto fail;
	if ((rc = avio_open(&w->oc->pb, wl_afile_tmp_path(w->af), AVIO_FLAG_WRITE)) < 0) {
		st = av_fail(err, rc, path, "opening the temporary file");
		goto fail;
	}
	/* the MP4 track timescale = our time base, so times stay exact */
	snprintf(buf, sizeof buf, "%d", opts->time_base_den);
	av_dict_set(&mopts, "video_track_timescale", buf, 0);
	rc = avformat_write_header(w->oc, &mopts);
	av_dict_free(&mopts);
	if (rc < 0) {
		st = av_fail(err, rc, path, "writing the header");
		goto fail;
	}
	w->header_written = 1;
	w->frame = av_frame_alloc();
	w->pkt = av_packet_alloc();
	if (!w->frame || !w->pkt) {
		st = wl_err_set(err, WL_ENOMEM, "cannot write video '%s': out of memory", path);
		goto fail;
	}
	w->frame->format = AV_PIX_FMT_YUV420P;
	w->frame->width = opts->width_px;
	w->frame->height = opts->height_px;
	if ((rc = av_frame_get_buffer(w->frame, 0)) < 0) {
		st = av_fail(err, rc, path, "allocating a frame");
		goto fail;
	}
	w->sws = sws_getContext(opts->width_px, opts->height_px, AV_PIX_FMT_RGB24, opts->width_px,
	                        opts->height_px, AV_PIX_FMT_YUV420P, SWS_BILINEAR, NULL, NULL, NULL);
	if (!w->sws) {
		st = wl_err_set(err, WL_EDECODE,
		                "cannot write video '%s': cannot set up the colour conversion", path);
		goto fail;
	}
	*out = w;
	return WL_OK;
fail:
	vw_free(w);
	return st;
}

/* Sends a frame (or NULL to flush) and writes every packet that comes out. */
static wl_status drain(wl_vwriter *w, AVFrame *f, wl_err *err)
{
	int rc = avcodec_send_frame(w->c, f);
	if (rc < 0)
		return av_fail(err, rc, w->path, "encoding");
	for (;;) {
		rc = avcodec_receive_packet(w->c, w->pkt);
		if (rc == AVERROR(EAGAIN) || rc == AVERROR_EOF)
			return WL_OK;
		if (rc < 0)
			return av_fail(err, rc, w->path, "encoding");
		av_packet_rescale_ts(w->pkt, w->c->time_base, w->st->time_base);
		w->pkt->stream_index = w->st->index;
		rc = av_interleaved_write_frame(w->oc, w->pkt);
		av_packet_unref(w->pkt);
		if (rc < 0)
			return av_fail(err, rc, w->path, "writing a packet");
	}
}

wl_status wl_vwriter_put_rgb(wl_vwriter *w, const uint8_t *rgb, int stride, double t_s, wl_err *err)
{
	const uint8_t *src[1] = {rgb};
	int srcstride[1] = {stride};
	int64_t pts;
	int rc;
	if (!isfinite(t_s) || t_s < 0)
		return wl_err_set(err, WL_EINVAL,
		                  "cannot write video '%s': frame %ld: time %g s is not valid", w->path,
		                  w->nframes, t_s);
	pts = llround(t_s * w->o.time_base_den);
	if (pts <= w->last_pts)
		return wl_err_set(err, WL_EINVAL,
		                  "cannot write video '%s': frame %ld: time %.6f s does not increase (time "
		                  "base 1/%d): space frames further apart",
		                  w->path, w->nframes, t_s, w->o.time_base_den);
	if ((rc = av_frame_make_writable(w->frame)) < 0)
		return av_fail(err, rc, w->path, "allocating a frame");
	sws_scale(w->sws, src, srcstride, 0, w->o.height_px, w->frame->data, w->frame->linesize);
	w->frame->pts = pts;
	w->last_pts = pts;
	w->nframes++;
	return drain(w, w->frame, err);
}

wl_status wl_vwriter_close(wl_vwriter *w, wl_err *err)
{
	wl_status st;
	int rc;
	if (!w)
		return WL_OK;
	if ((st = drain(w, NULL, err)))
		goto out;
	if ((rc = av_write_trailer(w->oc)) < 0) {
		st = av_fail(err, rc, w->path, "writing the trailer");
		goto out;
	}
	if ((rc = avio_closep(&w->oc->pb)) < 0) {
		st = av_fail(err, rc, w->path, "closing the file");
		goto out;
	}
	st = wl_afile_commit(w->af, err);
	w->af = NULL;
out:
	vw_free(w);
	return st;
}

void wl_vwriter_abort(wl_vwriter *w)
{
	vw_free(w);
}
