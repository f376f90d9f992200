/*
 * image.c: PNG output and orientation of still frames (see image.h).
 */
#include "decode/image.h"

#include <string.h>

#include "decode/av.h" /* FFmpeg, loaded on first use */

#include "core/afile.h"
#include "decode/decode.h"

void wl_image_orient(int rot_deg, const uint8_t *src, int w, int h, int stride, int channels, uint8_t *dst,
                     int dst_stride)
{
	int wd, hd;
	wl_orient_displayed_size(rot_deg, w, h, &wd, &hd);
	for (int vd = 0; vd < hd; vd++) {
		uint8_t *row = dst + (size_t)vd * (size_t)dst_stride;
		for (int ud = 0; ud < wd; ud++) {
			double u, v;
			wl_orient_to_coded(rot_deg, w, h, ud, vd, &u, &v);
			memcpy(row + (size_t)ud * (size_t)channels,
			       src + (size_t)v * (size_t)stride + (size_t)u * (size_t)channels,
			       (size_t)channels);
		}
	}
}

static wl_status encode_png(const uint8_t *data, int width, int height, int stride, int channels,
                            AVPacket *pkt, wl_err *err)
{
	const AVCodec *codec = avcodec_find_encoder(AV_CODEC_ID_PNG);
	AVCodecContext *cc = NULL;
	AVFrame *fr = NULL;
	wl_status st = WL_OK;
	int ret;

	if (!codec)
		return wl_err_set(err, WL_EDECODE,
		                  "no PNG encoder in this FFmpeg build: install libavcodec with PNG");
	cc = avcodec_alloc_context3(codec);
	fr = av_frame_alloc();
	if (!cc || !fr) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory encoding a PNG");
		goto out;
	}
	cc->width = width;
	cc->height = height;
	cc->pix_fmt = channels == 3 ? AV_PIX_FMT_RGB24 : AV_PIX_FMT_GRAY8;
	cc->time_base = (AVRational){1, 1};
	ret = avcodec_open2(cc, codec, NULL);
	if (ret < 0) {
		st = wl_err_set(err, WL_EDECODE, "cannot open the PNG encoder (%dx%d)", width, height);
		goto out;
	}
	fr->format = cc->pix_fmt;
	fr->width = width;
	fr->height = height;
	/* The encoder only reads the frame: point it at the caller's pixels. */
	fr->data[0] = (uint8_t *)(uintptr_t)data;
	fr->linesize[0] = stride;
	ret = avcodec_send_frame(cc, fr);
	if (ret >= 0)
		ret = avcodec_send_frame(cc, NULL);
	if (ret >= 0)
		ret = avcodec_receive_packet(cc, pkt);
	if (ret < 0)
		st = wl_err_set(err, WL_EDECODE, "the PNG encoder failed on a %dx%d image", width, height);
out:
	av_frame_free(&fr);
	avcodec_free_context(&cc);
	return st;
}

wl_status wl_png_write(const char *path, const uint8_t *data, int width, int height, int stride, int channels,
                       wl_err *err)
{
	AVPacket *pkt;
	wl_status st;

	if ((st = wl_av_load(err)) != WL_OK)
		return wl_err_prefix(err, st, "%s", path);
	av_log_set_level(AV_LOG_QUIET); /* the library never prints (process-wide, as in decode.c) */
	if (width <= 0 || height <= 0 || (channels != 1 && channels != 3) || stride < width * channels)
		return wl_err_set(err, WL_EINVAL,
		                  "%s: cannot write a %dx%d image with %d channels, stride %d", path, width,
		                  height, channels, stride);
	pkt = av_packet_alloc();
	if (!pkt)
		return wl_err_set(err, WL_ENOMEM, "%s: out of memory", path);
	st = encode_png(data, width, height, stride, channels, pkt, err);
	if (st != WL_OK)
		wl_err_prefix(err, st, "%s", path);
	else
		st = wl_write_file_atomic(path, pkt->data, (size_t)pkt->size, err);
	av_packet_free(&pkt);
	return st;
}
