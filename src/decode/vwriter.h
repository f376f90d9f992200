/*
 * vwriter.h: writes H.264 (libx264) in MP4 through libavcodec/libavformat,
 * for the renderer and the quality-control overlay.  Frames are given as
 * packed RGB24 with an explicit presentation time, so variable frame rates
 * are exact; optional rotation metadata (a display matrix) is stored.
 *
 * The file is written to a temporary name and renamed into place by
 * wl_vwriter_close (atomic, like every output).  Ownership: _open creates,
 * exactly one of _close (commit) or _abort frees.
 */
#ifndef WL_VWRITER_H
#define WL_VWRITER_H

#include <stdint.h>

#include "core/err.h"

typedef struct wl_vwriter wl_vwriter;

typedef struct {
	int width_px, height_px; /* even sizes */
	int time_base_den;       /* timestamps are multiples of 1/time_base_den s (e.g. 1000 or 30000) */
	double nominal_fps;      /* for the encoder's rate control */
	int rotation_deg;        /* display matrix to store: 0, 90, 180, 270 (counter-clockwise) */
	int crf;                 /* x264 quality (0 lossless .. 51); 0 means default 20 */
	int bit_rate_bps;        /* if > 0, target this bit rate instead of crf */
	int b_frames;            /* max B-frames (x264 default 3 if < 0) */
	int threads;             /* 0: all cores */
} wl_vwriter_opts;

wl_status wl_vwriter_open(const char *path, const wl_vwriter_opts *opts, wl_vwriter **out, wl_err *err);

/* Encodes one frame at time t_s (rounded to the time base; must increase). */
wl_status wl_vwriter_put_rgb(wl_vwriter *w, const uint8_t *rgb, int stride, double t_s, wl_err *err);

/* Flushes the encoder, writes the trailer and renames into place. */
wl_status wl_vwriter_close(wl_vwriter *w, wl_err *err);
void wl_vwriter_abort(wl_vwriter *w);

#endif
