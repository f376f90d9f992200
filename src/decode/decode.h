/*
 * decode.h: the streaming decoder, the first stage of the pipeline and the
 * only module (with vwriter.h) that includes FFmpeg's headers.
 *
 * A wl_decoder hands out one frame at a time as 8-bit planes: luma always,
 * packed RGB only when asked for (WL_DECODE_RGB), so that tag tracking never
 * pays for a colour conversion.  Memory is flat: only the current frame is
 * held.  Frame time comes from the presentation timestamp
 * (best-effort timestamp × stream time base), in seconds from the first
 * decoded frame, so variable-frame-rate phone clips are timed exactly.
 *
 * Pixels handed out are CODED pixels (as stored in the stream).  A clip with
 * rotation metadata (a display matrix) is shown turned by rotation_deg
 * counter-clockwise; wl_orient_* map points between coded and displayed
 * pixels.  Later stages say in their data which of the two they use.
 *
 * Ownership: wl_decoder_open creates, wl_decoder_destroy frees (NULL ok).
 * A frame from wl_decoder_next is borrowed: valid until the next call.
 */
#ifndef WL_DECODE_H
#define WL_DECODE_H

#include <stdint.h>

#include "core/err.h"

typedef struct wl_decoder wl_decoder;

enum {
	WL_DECODE_RGB = 1 << 0, /* also hand out packed RGB24 */
};

typedef struct {
	char path[1024];
	char codec[32];          /* e.g. "h264" */
	char pix_fmt[32];        /* e.g. "yuv420p", "yuvj420p", "yuv420p10le" */
	int width_px, height_px; /* coded size */
	int rotation_deg;        /* display rotation, counter-clockwise: 0, 90, 180 or 270 */
	int bit_depth;           /* bits per luma sample in the stream */
	int full_range;          /* 1 for full-range (yuvj, "pc") sources */
	double duration_s;       /* container's estimate; the decoded count is the truth */
	int64_t frames_hint;     /* container's frame count, 0 if unknown */
	double fps_hint;         /* average frame rate from the container, 0 if unknown */
} wl_video_info;

typedef struct {
	int64_t index;         /* 0-based, in presentation order */
	double t_s;            /* seconds since the first frame's presentation time */
	int width_px, height_px; /* coded size */
	const uint8_t *luma;   /* 8-bit, full range as in the stream after conversion */
	int luma_stride;       /* bytes per row (rows are padded) */
	const uint8_t *rgb;    /* packed RGB24 when WL_DECODE_RGB, else NULL */
	int rgb_stride;
	int corrupt;           /* the decoder flagged this frame (concealed errors) */
	int time_guessed;      /* no timestamp: t_s extrapolated from the frame rate */
} wl_frame;

/* One reported damage: a packet or frame that failed or was flagged. */
typedef struct {
	int64_t frame_index; /* the frame it concerns, or the next frame out, -1 if unknown */
	double t_s;          /* its time, NaN if unknown */
	char what[96];
} wl_damage;

/* Opens a clip.  threads <= 0 uses every core.  Errors (WL_EIO, WL_EDECODE)
 * name the file: cannot open, not a video, no video stream. */
wl_status wl_decoder_open(const char *path, unsigned flags, int threads, wl_decoder **out, wl_err *err);

const wl_video_info *wl_decoder_info(const wl_decoder *dec);

/* Decodes the next frame.  At end of stream returns WL_OK with *frame NULL
 * (after draining the decoder).  Corrupt packets are counted, not fatal.
 * A clip with no decodable frame at all gives WL_EDECODE on the first call. */
wl_status wl_decoder_next(wl_decoder *dec, const wl_frame **frame, wl_err *err);

/* Frames decoded so far and damage counted so far; wl_decoder_damage gives
 * up to WL_DAMAGE_KEEP of the first reports. */
#define WL_DAMAGE_KEEP 64
int64_t wl_decoder_frames(const wl_decoder *dec);
int64_t wl_decoder_damage_count(const wl_decoder *dec);
const wl_damage *wl_decoder_damage(const wl_decoder *dec, int *n);

void wl_decoder_destroy(wl_decoder *dec);

/* Coded <-> displayed pixel mapping for a rotation of rot_deg
 * (counter-clockwise, multiple of 90) of a coded image w×h.  Points use the
 * pixel-centre convention of camera.h; they round-trip exactly. */
void wl_orient_to_displayed(int rot_deg, int w, int h, double u, double v, double *ud, double *vd);
void wl_orient_to_coded(int rot_deg, int w, int h, double ud, double vd, double *u, double *v);
/* Displayed size of a coded w×h image. */
void wl_orient_displayed_size(int rot_deg, int w, int h, int *wd, int *hd);

#endif
