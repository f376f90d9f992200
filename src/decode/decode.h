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

#include "core/diag.h"
#include "core/err.h"

typedef struct wl_decoder wl_decoder;

/* Largest frame the decoder accepts: each side at most WL_DECODE_MAX_SIDE_PX
 * and at most WL_DECODE_MAX_PIXELS in all (8K UHD is 33 Mpixel).  A clip
 * whose header announces more is refused at open (WL_EFORMAT, naming the
 * file and the size) before any frame is allocated; a frame past the bound
 * in mid-stream is reported as damage and not handed out. */
#define WL_DECODE_MAX_SIDE_PX 16384
#define WL_DECODE_MAX_PIXELS (100LL * 1000 * 1000)

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
	double first_pts_s;      /* container time of the first frame (t_s = 0); NaN until it is decoded */
} wl_video_info;

typedef struct {
	int64_t index;           /* 0-based, in presentation order; -1 after wl_decoder_seek (unknown) */
	double t_s;              /* seconds since the first frame's presentation time */
	int width_px, height_px; /* coded size */
	const uint8_t *luma;     /* 8-bit, in the stream's range: 16..235 for limited-range ("tv")
	                          * sources, 0..255 for full-range (yuvj, "pc") ones; see info.full_range.
	                          * Points into the decoded frame for 8-bit YUV; converted otherwise. */
	int luma_stride;         /* bytes per row (rows are padded) */
	const uint8_t *rgb;      /* packed RGB24 when WL_DECODE_RGB, else NULL */
	int rgb_stride;
	int corrupt;      /* the decoder flagged this frame (concealed errors) */
	int time_guessed; /* no timestamp: t_s extrapolated from the frame rate (a live source: from
	                   * the arrival, since the first frame's) */
	double arrival_s; /* CLOCK_MONOTONIC seconds at which the demuxer handed over this frame's
	                   * packet (for a --realtime file: when its time came) */
	double lag_s;     /* live: how late that was against the stream's own clock (arrival less
	                   * timestamp, less the least such offset seen): time the packet waited
	                   * in buffers before wakeline read it, which arrival_s does not show;
	                   * NaN when unknown */
} wl_frame;

/* One reported damage: a packet or frame that failed or was flagged. */
typedef struct {
	int64_t frame_index; /* the frame it concerns (for a packet: estimated from its time), or the
	                      * next frame out; -1 if unknown (after a seek) */
	double t_s;          /* its time, NaN if unknown */
	char what[96];
} wl_damage;

/* Opens a clip.  threads <= 0 uses every core.  Errors (WL_EIO, WL_EDECODE,
 * WL_EFORMAT) name the file: cannot open, not a video, no video stream, a
 * frame size past the bounds above. */
wl_status wl_decoder_open(const char *path, unsigned flags, int threads, wl_decoder **out, wl_err *err);

/* ---- live sources ----
 *
 * wl_decoder_open_ex opens anything FFmpeg reads: a file, a device (V4L2
 * webcam: format "v4l2", source "/dev/video0") or a network URL (rtsp://,
 * udp://, rtp://, srt://, http://, tcp://).  With `live` set it decodes for
 * low delay: no frame threads (each adds a frame of delay; slice threads
 * only), short probing (no frame-rate analysis), no demuxer buffering for
 * devices, and it watches the input:
 *   - timeout_s: no packet for this long ends the stream (a sender that
 *     stopped or a dropped connection on UDP, which has no end of its own);
 *     open_timeout_s is the wait for the first data, while opening;
 *   - max_lag_s: when the input runs this far behind the stream's own clock
 *     (estimated from packet arrival against timestamps: the decoder cannot
 *     keep up), packets are skipped up to the next key frame that is on
 *     time again; skipped frames are counted (wl_decoder_skipped);
 *   - interrupt: polled while waiting; non-zero stops the stream (SIGINT).
 * `realtime` reads a file no faster than its timestamps (a rehearsal of a
 * live source).  `record_path` copies the video stream's packets, as they
 * arrive and without re-encoding, to a file (container from its extension;
 * MP4/MOV are written fragmented so that a killed run leaves a playable
 * file; MPEG-TS (.ts) and Matroska (.mkv) need nothing special); the
 * recording starts at the first key frame.
 * `options` are FFmpeg options for the demuxer, device or protocol, as
 * NULL-terminated key, value pairs (e.g. "video_size", "1280x720",
 * "framerate", "30", "input_format", "mjpeg", "rtsp_transport", "tcp"); an
 * option that nothing used is reported through diag. */
typedef struct {
	unsigned flags;              /* WL_DECODE_RGB */
	int threads;                 /* decoder threads; <= 0 all cores */
	int live;                    /* see above */
	const char *format;          /* FFmpeg input format or device ("v4l2", "mpegts"); NULL: guessed */
	const char *const *options;  /* NULL or key, value, ..., NULL */
	int realtime;                /* read no faster than the timestamps */
	double timeout_s;            /* live: <= 0 waits for ever */
	double open_timeout_s;       /* live: the wait for the stream to start; <= 0: timeout_s */
	double max_lag_s;            /* live: <= 0 never skips */
	const char *record_path;     /* NULL: no recording */
	int (*interrupt)(void *ctx); /* NULL, or polled while waiting: non-zero stops */
	void *interrupt_ctx;
	const wl_diag *diag; /* warnings during the open (options nothing used); may be NULL */
} wl_decode_opts;

/* Defaults: no flags, all cores, not live, no timeout. */
void wl_decode_opts_init(wl_decode_opts *o);

/* Opens a file, device or URL with options.  Errors as wl_decoder_open,
 * and WL_EIO for a source that cannot be reached or sent nothing before
 * the timeout ("no data ... for N s").  wl_decoder_open(path, f, t) is
 * wl_decoder_open_ex with flags f and threads t. */
wl_status wl_decoder_open_ex(const char *source, const wl_decode_opts *o, wl_decoder **out, wl_err *err);

/* Why the stream ended (after wl_decoder_next handed out NULL or failed). */
typedef enum {
	WL_END_NONE = 0, /* not ended */
	WL_END_EOF,      /* the source said so: end of file, or the sender closed the connection */
	WL_END_TIMEOUT,  /* nothing arrived for timeout_s */
	WL_END_ERROR,    /* a read error: connection reset, device gone, ... */
	WL_END_STOPPED   /* the interrupt callback asked to stop */
} wl_decode_end;

/* The reason, and in *what (may be NULL) a line for the user ("connection
 * reset by peer", "no data for 2.0 s"); the string lives with dec. */
wl_decode_end wl_decoder_end(const wl_decoder *dec, const char **what);

/* Frames skipped to catch up with a live source (max_lag_s). */
int64_t wl_decoder_skipped(const wl_decoder *dec);

/* NULL, or what went wrong with the recording (it stopped there; the
 * stream goes on).  The string lives with dec. */
const char *wl_decoder_record_error(const wl_decoder *dec);

/* Finishes the recording (trailer, close); later packets are not recorded.
 * WL_EIO names the file.  wl_decoder_destroy also finishes it, silently. */
wl_status wl_decoder_close_record(wl_decoder *dec, wl_err *err);

const wl_video_info *wl_decoder_info(const wl_decoder *dec);

/* Decodes the next frame.  At end of stream returns WL_OK with *frame NULL
 * (after draining the decoder).  Corrupt packets are counted, not fatal.
 * A clip with no decodable frame at all gives WL_EDECODE on the first call. */
wl_status wl_decoder_next(wl_decoder *dec, const wl_frame **frame, wl_err *err);

/* Positions the decoder at the key frame at or before t_s (seconds since
 * the first frame, as in wl_frame.t_s): the next wl_decoder_next calls return
 * frames from there on, with their true t_s and index -1.  The caller decodes
 * forward to the wanted time.  Decodes the first frame first if none has
 * been (the time origin).  Invalidates the last frame handed out.
 * WL_EDECODE if the container cannot seek. */
wl_status wl_decoder_seek(wl_decoder *dec, double t_s, wl_err *err);

/* Frames decoded so far and damage counted so far; wl_decoder_damage gives
 * up to WL_DAMAGE_KEEP of the first reports. */
#define WL_DAMAGE_KEEP 64
int64_t wl_decoder_frames(const wl_decoder *dec);
int64_t wl_decoder_damage_count(const wl_decoder *dec);
const wl_damage *wl_decoder_damage(const wl_decoder *dec, int *n);

void wl_decoder_destroy(wl_decoder *dec);

/* A display-matrix angle (degrees counter-clockwise, any value, as from
 * av_display_rotation_get) rounded to a multiple of 90 and put in
 * {0, 90, 180, 270}: -90 gives 270.  NaN gives 0. */
int wl_orient_from_degrees(double deg_ccw);

/* Coded <-> displayed pixel mapping for a rotation of rot_deg
 * (counter-clockwise, multiple of 90) of a coded image w×h.  Points use the
 * pixel-centre convention of camera.h (centre of the top-left pixel at 0,0),
 * so pixel centres map onto pixel centres.  The maps are mutual inverses;
 * the round trip is exact for whole and dyadic sub-pixel coordinates
 * (k / 2^m, as any sub-pixel value of bounded precision) and within one
 * ulp of the image size otherwise. */
void wl_orient_to_displayed(int rot_deg, int w, int h, double u, double v, double *ud, double *vd);
void wl_orient_to_coded(int rot_deg, int w, int h, double ud, double vd, double *u, double *v);
/* Displayed size of a coded w×h image. */
void wl_orient_displayed_size(int rot_deg, int w, int h, int *wd, int *hd);

#endif
