/*
 * record.h: inside the decode module only (it speaks FFmpeg's types): the
 * copy of a live input's video packets to a file without re-encoding
 * (wl_decode_opts.record_path).  Packets are written as they are read,
 * with one write to the file per packet, so that a run that is killed
 * leaves a file that plays up to its last whole packet: MP4 and MOV are
 * written fragmented at key frames for that reason.  The header waits for
 * the first decoded frame (record.c says why).
 *
 * Ownership: wl_rec_open creates, wl_rec_close writes the trailer and
 * frees (NULL ok).
 */
#ifndef WL_DECODE_RECORD_H
#define WL_DECODE_RECORD_H

#include <libavcodec/avcodec.h>
#include <libavcodec/packet.h>
#include <libavformat/avformat.h>

#include "core/err.h"

typedef struct wl_rec wl_rec;

/* Opens path for a copy of stream `in` (container from the extension). */
wl_status wl_rec_open(const char *path, const AVStream *in, wl_rec **out, wl_err *err);

/* Writes one packet of `in` (not taken over; the caller still owns it).
 * Packets before the first key frame are left out; those until
 * wl_rec_ready are held.  Returns 0 or a negative AVERROR. */
int wl_rec_packet(wl_rec *r, const AVPacket *pkt, const AVStream *in);

/* The decoder has decoded a frame: the stream's parameters are known, the
 * header and the held packets are written (once; later calls do nothing).
 * Returns 0 or a negative AVERROR. */
int wl_rec_ready(wl_rec *r, const AVCodecContext *cc, const AVStream *in);

/* Writes the trailer, closes and frees.  WL_EIO names the file. */
wl_status wl_rec_close(wl_rec *r, wl_err *err);

#endif
