/*
 * decode.c: the streaming decoder (stage 1).  Demuxes with libavformat,
 * decodes with libavcodec (frame threads), and hands out 8-bit luma planes:
 * straight from the decoded frame when the stream is 8-bit planar YUV or
 * gray, through libswscale otherwise (10-bit, RGB sources).  Packed RGB24 is
 * made only when WL_DECODE_RGB is asked for.  See decode.h for the contract.
 */
#define _POSIX_C_SOURCE 200809L
#include "decode/decode.h"

#include "core/csvio.h"
#include "decode/record.h"

#include <dlfcn.h>
#include <errno.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "decode/av.h" /* FFmpeg, loaded on first use */
#include <libavdevice/version_major.h>

/* After this many receive errors in a row the stream is given up (a decoder
 * that keeps failing would otherwise spin). */
#define MAX_ERRORS_IN_A_ROW 1000

/* Packets whose arrival is remembered to time the frames they become (a
 * frame comes out of the decoder after its packet, later with reordering). */
#define ARRIVAL_KEEP 64

/* A swscale conversion and its output frame, remade when the input changes. */
struct conv {
	struct SwsContext *sws;
	AVFrame *out;
	int w, h, src_fmt, src_full, cs;
};

struct wl_decoder {
	AVFormatContext *fmt;
	AVCodecContext *cc;
	AVStream *st;
	int sidx;
	unsigned flags;
	AVPacket *pkt;
	AVFrame *frame;
	int pkt_pending; /* pkt holds a packet the decoder refused with EAGAIN */
	int draining;    /* the NULL packet was sent */
	int finished;    /* the decoder returned AVERROR_EOF */
	int after_seek;  /* frame indices are unknown since a seek */
	int end_checked; /* check_end has run */

	wl_video_info info;
	wl_frame out;
	double tb_s;       /* stream time base in seconds */
	double guess_dt_s; /* frame interval used when a frame has no timestamp */

	int have_origin;        /* origin_ts is set */
	int64_t origin_ts;      /* best-effort timestamp of the first timed frame */
	double origin_offset_s; /* t_s given to that frame (non-zero only if untimed frames came first) */
	int have_last;
	double last_t_s;

	int64_t nframes;
	int64_t ndamage;
	wl_damage damage[WL_DAMAGE_KEEP];
	int errors_in_a_row;

	struct conv *luma_conv, *rgb_conv;

	/* live sources (wl_decode_opts) */
	wl_decode_opts o;
	char source[1024];
	double t_last_read;      /* monotonic time of the last packet (or of the open) */
	int opening;             /* in the open: open_timeout_s applies */
	double last_arrival;     /* arrival of the last packet of our stream */
	double arrival_origin_s; /* live without timestamps: the first frame's arrival (t_s 0) */
	int no_timestamps;       /* live, and the container has none (AVFMT_NOTIMESTAMPS) */
	struct {
		int64_t pts;
		double t, lag;
	} arrival[ARRIVAL_KEEP];
	int narrival;
	int rt_started; /* realtime: the first packet's time and wall clock are set */
	double rt_wall0, rt_ts0;
	int have_off; /* max_lag_s: the least (arrival - timestamp) seen */
	double min_off;
	int skipping; /* dropping packets up to a key frame on time */
	int seen_key; /* the demuxer marks key frames */
	int64_t skipped;
	wl_rec *rec;
	int rec_failed;
	char rec_error[160];
	wl_decode_end end;
	char end_what[256];
};

static double mono_now(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

void wl_decode_opts_init(wl_decode_opts *o)
{
	memset(o, 0, sizeof *o);
}

/* ---- orientation ------------------------------------------------------ */

int wl_orient_from_degrees(double deg_ccw)
{
	long q;
	if (!isfinite(deg_ccw))
		return 0;
	q = lround(deg_ccw / 90.0) % 4;
	if (q < 0)
		q += 4;
	return (int)(q * 90);
}

/*
 * A coded w×h image shown turned by rot counter-clockwise.  Pixel centres
 * are at whole coordinates (camera.h), so the last column is at w-1:
 *   90 CCW:  ud = v,           vd = (w-1) - u   (top-right corner goes to top-left)
 *   180:     ud = (w-1) - u,   vd = (h-1) - v
 *   270 CCW: ud = (h-1) - v,   vd = u           (top-left corner goes to top-right)
 */
void wl_orient_to_displayed(int rot_deg, int w, int h, double u, double v, double *ud, double *vd)
{
	double wm = w - 1, hm = h - 1;
	switch (wl_orient_from_degrees(rot_deg)) {
	case 90:
		*ud = v;
		*vd = wm - u;
		break;
	case 180:
		*ud = wm - u;
		*vd = hm - v;
		break;
	case 270:
		*ud = hm - v;
		*vd = u;
		break;
	default:
		*ud = u;
		*vd = v;
	}
}

void wl_orient_to_coded(int rot_deg, int w, int h, double ud, double vd, double *u, double *v)
{
	double wm = w - 1, hm = h - 1;
	switch (wl_orient_from_degrees(rot_deg)) {
	case 90:
		*u = wm - vd;
		*v = ud;
		break;
	case 180:
		*u = wm - ud;
		*v = hm - vd;
		break;
	case 270:
		*u = vd;
		*v = hm - ud;
		break;
	default:
		*u = ud;
		*v = vd;
	}
}

void wl_orient_displayed_size(int rot_deg, int w, int h, int *wd, int *hd)
{
	int r = wl_orient_from_degrees(rot_deg);
	*wd = (r == 90 || r == 270) ? h : w;
	*hd = (r == 90 || r == 270) ? w : h;
}

/* ---- errors and damage ------------------------------------------------- */

static wl_status av_fail(wl_err *err, const char *path, const char *what, int averr, const char *todo)
{
	char buf[AV_ERROR_MAX_STRING_SIZE] = "";
	av_strerror(averr, buf, sizeof buf);
	return wl_err_set(err, WL_EDECODE, "%s: %s: %s: %s", path, what, buf, todo);
}

static void add_damage(wl_decoder *dec, int64_t index, double t_s, const char *what, int averr)
{
	wl_damage *d;
	dec->ndamage++;
	if (dec->ndamage > WL_DAMAGE_KEEP)
		return;
	d = &dec->damage[dec->ndamage - 1];
	d->frame_index = index;
	d->t_s = t_s;
	if (averr) {
		char buf[AV_ERROR_MAX_STRING_SIZE] = "";
		av_strerror(averr, buf, sizeof buf);
		snprintf(d->what, sizeof d->what, "%s: %s", what, buf);
	} else {
		snprintf(d->what, sizeof d->what, "%s", what);
	}
}

/* Time of a stream timestamp relative to the first frame, NaN if unknown. */
static double ts_to_t(const wl_decoder *dec, int64_t ts)
{
	if (ts == AV_NOPTS_VALUE || !dec->have_origin)
		return NAN;
	return (double)(ts - dec->origin_ts) * dec->tb_s + dec->origin_offset_s;
}

/* Index of the next frame to come out, -1 when unknown (after a seek). */
static int64_t next_index(const wl_decoder *dec)
{
	return dec->after_seek ? -1 : dec->nframes;
}

/* The frame a packet holds, estimated from its time and the mean interval so
 * far (packets arrive in decoding order, ahead of the frames that come out);
 * the next frame out when its time is unknown. */
static int64_t packet_index(const wl_decoder *dec, int64_t pts)
{
	double t = ts_to_t(dec, pts), dt;
	int64_t k;
	if (dec->after_seek)
		return -1;
	if (!isfinite(t) || !dec->have_last)
		return dec->nframes;
	dt = dec->nframes > 1 ? dec->last_t_s / (double)(dec->nframes - 1) : dec->guess_dt_s;
	if (!(dt > 0))
		return dec->nframes;
	k = dec->nframes - 1 + (int64_t)llround((t - dec->last_t_s) / dt);
	return k < 0 ? 0 : k;
}

/* ---- opening ------------------------------------------------------------ */

static void fill_info(wl_decoder *dec, const char *path)
{
	wl_video_info *in = &dec->info;
	const AVCodecParameters *par = dec->st->codecpar;
	const AVPixFmtDescriptor *desc = av_pix_fmt_desc_get((enum AVPixelFormat)par->format);
	const uint8_t *sd;
	size_t sd_size = 0;
	AVRational fr;

	snprintf(in->path, sizeof in->path, "%s", path);
	snprintf(in->codec, sizeof in->codec, "%s", avcodec_get_name(par->codec_id));
	snprintf(in->pix_fmt, sizeof in->pix_fmt, "%s", desc ? desc->name : "unknown");
	in->width_px = par->width;
	in->height_px = par->height;
	in->bit_depth = desc ? desc->comp[0].depth : 0;
	in->full_range = par->color_range == AVCOL_RANGE_JPEG ||
	                 (desc && strncmp(desc->name, "yuvj", 4) == 0) ||
	                 (desc && (desc->flags & AV_PIX_FMT_FLAG_RGB));

	sd = av_stream_get_side_data(dec->st, AV_PKT_DATA_DISPLAYMATRIX, &sd_size);
	in->rotation_deg = (sd && sd_size >= 9 * sizeof(int32_t))
	                           ? wl_orient_from_degrees(av_display_rotation_get((const int32_t *)sd))
	                           : 0;

	if (dec->st->duration != AV_NOPTS_VALUE && dec->st->duration > 0)
		in->duration_s = (double)dec->st->duration * dec->tb_s;
	else if (dec->fmt->duration != AV_NOPTS_VALUE && dec->fmt->duration > 0)
		in->duration_s = (double)dec->fmt->duration / AV_TIME_BASE;
	in->frames_hint = dec->st->nb_frames > 0 ? dec->st->nb_frames : 0;
	fr = dec->st->avg_frame_rate;
	in->fps_hint = (fr.num > 0 && fr.den > 0) ? av_q2d(fr) : 0;
	in->first_pts_s = NAN;

	fr = av_guess_frame_rate(dec->fmt, dec->st, NULL);
	dec->guess_dt_s = (fr.num > 0 && fr.den > 0) ? 1.0 / av_q2d(fr) : 1.0 / 25.0;
}

/* Frame sizes past WL_DECODE_MAX_*: refused before anything is allocated
 * for them (a damaged or hostile header could ask for gigabytes). */
static int size_too_large(int w, int h)
{
	return w > WL_DECODE_MAX_SIDE_PX || h > WL_DECODE_MAX_SIDE_PX ||
	       (long long)w * (long long)h > WL_DECODE_MAX_PIXELS;
}

static wl_status check_sizes(const AVFormatContext *fmt, const char *path, wl_err *err)
{
	for (unsigned i = 0; i < fmt->nb_streams; i++) {
		const AVCodecParameters *par = fmt->streams[i]->codecpar;
		if (par->codec_type == AVMEDIA_TYPE_VIDEO && size_too_large(par->width, par->height))
			return wl_err_set(
			        err, WL_EFORMAT,
			        "%s: stream %u announces frames of %dx%d pixels, more than the %dx%d "
			        "and %lld Mpixel wakeline accepts: the header is damaged, or scale "
			        "the clip down (e.g. ffmpeg -vf scale=1920:-2)",
			        path, i, par->width, par->height, WL_DECODE_MAX_SIDE_PX,
			        WL_DECODE_MAX_SIDE_PX, WL_DECODE_MAX_PIXELS / 1000000);
	}
	return WL_OK;
}

/* Polled by FFmpeg while it waits for input: stops on request, and for a
 * live source when nothing arrived for timeout_s. */
static int interrupt_cb(void *ctx)
{
	wl_decoder *dec = ctx;
	double limit = dec->opening && dec->o.open_timeout_s > 0 ? dec->o.open_timeout_s : dec->o.timeout_s;
	if (dec->o.interrupt && dec->o.interrupt(dec->o.interrupt_ctx)) {
		dec->end = WL_END_STOPPED;
		snprintf(dec->end_what, sizeof dec->end_what, "stopped");
		return 1;
	}
	if (dec->o.live && limit > 0 && mono_now() - dec->t_last_read > limit) {
		char b[WL_NUMBUF];
		dec->end = WL_END_TIMEOUT;
		snprintf(dec->end_what, sizeof dec->end_what, "no data for %s s", wl_fmt_fixed(b, limit, 1));
		return 1;
	}
	return 0;
}

static int is_url(const char *s)
{
	return strstr(s, "://") != NULL;
}

/* FFmpeg's device inputs (V4L2 and friends) live in libavdevice, which
 * pulls in some eighty libraries (audio servers, X11, SDL, OpenGL): linked
 * directly, it costs every command ~80 ms of start-up, most of what `clean`
 * and `measure` take.  It is loaded here, on the first input that names a
 * format, and only then.  Without it, formats that are not devices still
 * work; av_find_input_format's failure message says what to install. */
#define AVDEVICE_SONAME "libavdevice.so." AV_STRINGIFY(LIBAVDEVICE_VERSION_MAJOR)
static pthread_once_t devices_once = PTHREAD_ONCE_INIT;
static int devices_loaded;
static void register_devices(void)
{
	void *lib = dlopen(AVDEVICE_SONAME, RTLD_NOW | RTLD_GLOBAL);
	void (*reg)(void);
	if (!lib)
		return;
	/* POSIX's sanctioned way to turn dlsym's object pointer into a function pointer */
	*(void **)&reg = dlsym(lib, "avdevice_register_all");
	if (reg) {
		reg();
		devices_loaded = 1;
	}
	/* the library stays loaded: FFmpeg keeps pointers into it */
}

/* A file given by path: the checks that give clearer messages than FFmpeg's. */
static wl_status check_file(const char *path, wl_err *err)
{
	struct stat sb;
	if (stat(path, &sb) != 0)
		return wl_err_set(err, WL_EIO, "%s: cannot open video: %s: check the path", path,
		                  strerror(errno));
	if (S_ISDIR(sb.st_mode))
		return wl_err_set(err, WL_EIO, "%s: is a directory, not a video file: give the clip's path",
		                  path);
	if (S_ISREG(sb.st_mode) && sb.st_size == 0)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: the file is empty: copy the clip again from the camera", path);
	return WL_OK;
}

/* The demuxer options: the caller's, and for a live source short probing
 * without frame-rate analysis (it would hold frames back at the start). */
static AVDictionary *input_options(const char *path, const wl_decode_opts *o)
{
	AVDictionary *d = NULL;
	for (const char *const *kv = o->options; kv && kv[0] && kv[1]; kv += 2)
		av_dict_set(&d, kv[0], kv[1], 0);
	if (o->live && (strncmp(path, "udp://", 6) == 0 || strncmp(path, "rtp://", 6) == 0))
		/* a reader that fell behind catches up (skipping) rather than
		 * failing when FFmpeg's receive buffer fills */
		av_dict_set(&d, "overrun_nonfatal", "1", AV_DICT_DONT_OVERWRITE);
	if (o->live) {
		av_dict_set(&d, "probesize", "500000", AV_DICT_DONT_OVERWRITE);
		av_dict_set(&d, "analyzeduration", "1000000", AV_DICT_DONT_OVERWRITE);
		av_dict_set(&d, "fpsprobesize", "0", AV_DICT_DONT_OVERWRITE);
	}
	return d;
}

static wl_status open_failed(wl_decoder *dec, const char *path, int ret, wl_err *err)
{
	char b[WL_NUMBUF];
	if (dec->end == WL_END_STOPPED)
		return wl_err_set(err, WL_EIO, "%s: stopped before the stream opened", path);
	if (dec->end == WL_END_TIMEOUT)
		return wl_err_set(
		        err, WL_EIO,
		        "%s: no data for %s s: check that the camera or sender is running and "
		        "sends to this address",
		        path,
		        wl_fmt_fixed(b, dec->o.open_timeout_s > 0 ? dec->o.open_timeout_s : dec->o.timeout_s,
		                     1));
	if (is_url(path) || dec->o.format)
		return av_fail(err, path, "cannot open the source", ret,
		               "check the address or device, and that the sender or camera is running");
	return av_fail(err, path, "cannot read as video", ret,
	               "check that it is a video file (MP4, MOV, MKV...) and not truncated");
}

static wl_status open_input(wl_decoder *dec, const char *path, const wl_decode_opts *o, wl_err *err)
{
	const AVInputFormat *ifmt = NULL;
	const char *fname = o->format;
	AVDictionary *opts, *opts_given = NULL;
	const AVDictionaryEntry *e = NULL;
	int ret;
	wl_status st;

	if (!fname && strncmp(path, "/dev/video", 10) == 0)
		fname = "v4l2"; /* a V4L2 device is not probed as a file */
	if (!fname && !is_url(path) && (st = check_file(path, err)) != WL_OK)
		return st;
	if (fname) {
		pthread_once(&devices_once, register_devices);
		if (!(ifmt = av_find_input_format(fname)))
			return wl_err_set(
			        err, WL_EINVAL,
			        "input format '%s' is not known to this FFmpeg: see 'ffmpeg -formats' "
			        "and 'ffmpeg -devices'%s",
			        fname,
			        devices_loaded ? ""
			                       : " (" AVDEVICE_SONAME " could not be loaded, so no device "
			                         "input is known: apt-get install libavdevice59)");
	}
	if (!(dec->fmt = avformat_alloc_context()))
		return wl_err_set(err, WL_ENOMEM, "%s: out of memory", path);
	dec->fmt->interrupt_callback.callback = interrupt_cb;
	dec->fmt->interrupt_callback.opaque = dec;
	opts = input_options(path, o);
	av_dict_copy(&opts_given, opts, 0);
	dec->t_last_read = mono_now();
	dec->opening = 1;
	ret = avformat_open_input(&dec->fmt, path, ifmt, &opts);
	if (ret < 0) {
		av_dict_free(&opts);
		av_dict_free(&opts_given);
		return open_failed(dec, path, ret, err);
	}
	while ((e = av_dict_get(opts, "", e, AV_DICT_IGNORE_SUFFIX)))
		wl_diag_warn(o->diag, "decode", "%s: option '%s' was not used by this source: check its name",
		             path, e->key);
	/* MPEG-TS: each PES holds one whole frame (as FFmpeg, GStreamer and
	 * cameras write it), so the parser, which holds every frame back until
	 * the next one starts, is left out: that saves a frame interval of delay.
	 * fflags given by the user decide instead. */
	if (o->live && !av_dict_get(opts_given, "fflags", NULL, 0) &&
	    strcmp(dec->fmt->iformat->name, "mpegts") == 0)
		dec->fmt->flags |= AVFMT_FLAG_NOPARSE;
	av_dict_free(&opts);
	av_dict_free(&opts_given);
	/* MJPEG over HTTP and the like carry no times: frames are timed by
	 * their arrival (emit), and no lag can be told */
	dec->no_timestamps = o->live && (dec->fmt->iformat->flags & AVFMT_NOTIMESTAMPS);
	/* a device hands out frames as they are captured: nothing to buffer */
	if (o->live && dec->fmt->iformat->priv_class &&
	    dec->fmt->iformat->priv_class->category == AV_CLASS_CATEGORY_DEVICE_VIDEO_INPUT)
		dec->fmt->flags |= AVFMT_FLAG_NOBUFFER;
	/* checked before and after reading the first packets: some demuxers
	 * (raw video, Y4M) read whole frames of the announced size */
	if (check_sizes(dec->fmt, path, err) != WL_OK)
		return WL_EFORMAT;
	ret = avformat_find_stream_info(dec->fmt, NULL);
	if (ret < 0)
		return dec->end != WL_END_NONE ? open_failed(dec, path, ret, err)
		                               : av_fail(err, path, "cannot read the stream headers", ret,
		                                         "the file may be damaged; try re-exporting it");
	dec->opening = 0;
	dec->t_last_read = mono_now();
	return check_sizes(dec->fmt, path, err);
}

/* No stream, or a stream without a codec id: the demuxer read only part of
 * the header (an MP4 cut inside its moov box), not a codec we lack. */
static int stream_unknown(const AVFormatContext *fmt)
{
	if (fmt->nb_streams == 0)
		return 1;
	for (unsigned i = 0; i < fmt->nb_streams; i++)
		if (fmt->streams[i]->codecpar->codec_id == AV_CODEC_ID_NONE)
			return 1;
	return 0;
}

static wl_status open_codec(wl_decoder *dec, const char *path, wl_err *err)
{
	const AVCodec *codec = NULL;
	int ret = av_find_best_stream(dec->fmt, AVMEDIA_TYPE_VIDEO, -1, -1, &codec, 0);

	if (ret < 0 && stream_unknown(dec->fmt))
		return wl_err_set(
		        err, WL_EFORMAT,
		        "%s: no readable video stream: the file's index is cut short or damaged (or "
		        "it is not a video): copy the clip again from the camera",
		        path);
	if (ret == AVERROR_STREAM_NOT_FOUND ||
	    (ret >= 0 && (dec->fmt->streams[ret]->disposition & AV_DISPOSITION_ATTACHED_PIC)))
		return wl_err_set(err, WL_EFORMAT, "%s: has no video stream: give a video clip, not %s", path,
		                  ret >= 0 ? "a still picture" : "an audio or data file");
	if (ret < 0 || !codec)
		return av_fail(err, path, "no decoder for the video stream",
		               ret < 0 ? ret : AVERROR_DECODER_NOT_FOUND,
		               "convert the clip to H.264 (e.g. with ffmpeg -c:v libx264)");
	dec->sidx = ret;
	dec->st = dec->fmt->streams[ret];
	dec->tb_s = av_q2d(dec->st->time_base);
	dec->cc = avcodec_alloc_context3(codec);
	if (!dec->cc)
		return wl_err_set(err, WL_ENOMEM, "%s: out of memory opening the decoder", path);
	ret = avcodec_parameters_to_context(dec->cc, dec->st->codecpar);
	if (ret < 0)
		return av_fail(err, path, "cannot set up the decoder", ret,
		               "the stream headers may be damaged");
	dec->cc->pkt_timebase = dec->st->time_base;
	dec->cc->max_pixels = WL_DECODE_MAX_PIXELS; /* FFmpeg refuses larger frames mid-stream */
	/* frame threads hold back a frame per thread: a live source uses slice
	 * threads only (which help when the stream has several slices) */
	dec->cc->thread_type = dec->o.live ? FF_THREAD_SLICE : FF_THREAD_FRAME;
	dec->cc->thread_count = dec->o.threads > 0 ? dec->o.threads : 0;
	ret = avcodec_open2(dec->cc, codec, NULL);
	if (ret < 0)
		return av_fail(err, path, "cannot open the decoder", ret,
		               "the stream headers may be damaged");
	return WL_OK;
}

wl_status wl_decoder_open_ex(const char *path, const wl_decode_opts *o, wl_decoder **out, wl_err *err)
{
	wl_decoder *dec;
	wl_status st;

	*out = NULL;
	if ((st = wl_av_load(err)) != WL_OK)
		return wl_err_prefix(err, st, "%s", path);
	/* FFmpeg logs to stderr by default; the library must not print.  The
	 * level is process-wide, which is acceptable for this program. */
	av_log_set_level(AV_LOG_QUIET);
	dec = calloc(1, sizeof *dec);
	if (!dec)
		return wl_err_set(err, WL_ENOMEM, "%s: out of memory", path);
	dec->o = *o;
	dec->flags = o->flags;
	snprintf(dec->source, sizeof dec->source, "%s", path);
	st = open_input(dec, path, o, err);
	if (st == WL_OK)
		st = open_codec(dec, path, err);
	if (st == WL_OK) {
		dec->pkt = av_packet_alloc();
		dec->frame = av_frame_alloc();
		if (!dec->pkt || !dec->frame)
			st = wl_err_set(err, WL_ENOMEM, "%s: out of memory", path);
	}
	if (st == WL_OK && o->record_path)
		st = wl_rec_open(o->record_path, dec->st, &dec->rec, err);
	/* borrowed for the open only (diag.h); the rest are not needed later */
	dec->o.diag = NULL;
	dec->o.format = NULL;
	dec->o.options = NULL;
	dec->o.record_path = NULL;
	if (st != WL_OK) {
		wl_decoder_destroy(dec);
		return st;
	}
	fill_info(dec, path);
	*out = dec;
	return WL_OK;
}

wl_status wl_decoder_open(const char *path, unsigned flags, int threads, wl_decoder **out, wl_err *err)
{
	wl_decode_opts o;
	wl_decode_opts_init(&o);
	o.flags = flags;
	o.threads = threads;
	return wl_decoder_open_ex(path, &o, out, err);
}

const wl_video_info *wl_decoder_info(const wl_decoder *dec)
{
	return &dec->info;
}

/* ---- planes ------------------------------------------------------------- */

/* True when data[0] already is the 8-bit luma plane (8-bit planar or
 * semi-planar YUV, gray). */
static int luma_is_direct(enum AVPixelFormat f)
{
	const AVPixFmtDescriptor *d = av_pix_fmt_desc_get(f);
	if (!d || (d->flags & (AV_PIX_FMT_FLAG_RGB | AV_PIX_FMT_FLAG_PAL | AV_PIX_FMT_FLAG_BITSTREAM |
	                       AV_PIX_FMT_FLAG_HWACCEL | AV_PIX_FMT_FLAG_FLOAT | AV_PIX_FMT_FLAG_BAYER)))
		return 0;
	return d->comp[0].plane == 0 && d->comp[0].step == 1 && d->comp[0].depth == 8 &&
	       d->comp[0].shift == 0 && d->comp[0].offset == 0;
}

static int frame_full_range(const AVFrame *f)
{
	const AVPixFmtDescriptor *d = av_pix_fmt_desc_get((enum AVPixelFormat)f->format);
	return f->color_range == AVCOL_RANGE_JPEG || (d && strncmp(d->name, "yuvj", 4) == 0) ||
	       (d && (d->flags & AV_PIX_FMT_FLAG_RGB));
}

static void conv_free(struct conv *c)
{
	if (!c)
		return;
	sws_freeContext(c->sws);
	av_frame_free(&c->out);
	free(c);
}

/* The 8-bit YUV format with the same chroma layout, so that swscale does not
 * resample chroma we do not use. */
static enum AVPixelFormat yuv8_like(enum AVPixelFormat f)
{
	const AVPixFmtDescriptor *d = av_pix_fmt_desc_get(f);
	if (d && d->log2_chroma_w == 0 && d->log2_chroma_h == 0)
		return AV_PIX_FMT_YUV444P;
	if (d && d->log2_chroma_w == 1 && d->log2_chroma_h == 0)
		return AV_PIX_FMT_YUV422P;
	return AV_PIX_FMT_YUV420P;
}

/*
 * Sets up a conversion of frames like f to dst_fmt.  The ranges are given as
 * options before sws_init_context: FFmpeg 5.1's sws_setColorspaceDetails does
 * not redo the range conversion for sources deeper than 8 bits, and swscale
 * takes GRAY8 as full range, so a limited 10-bit clip would come out
 * stretched.  The luma of a YUV source therefore goes through an 8-bit YUV
 * format in the source's own range; RGB output is full range, with the
 * source's matrix (BT.601 when the stream does not say, as swscale and the
 * ffmpeg CLI assume).
 */
static int conv_setup(struct conv *c, const AVFrame *f, enum AVPixelFormat dst_fmt, int full, int cs)
{
	int rgb_dst = dst_fmt == AV_PIX_FMT_RGB24;
	sws_freeContext(c->sws);
	av_frame_free(&c->out);
	c->sws = sws_alloc_context();
	c->out = av_frame_alloc();
	if (!c->sws || !c->out)
		return 0;
	av_opt_set_int(c->sws, "srcw", f->width, 0);
	av_opt_set_int(c->sws, "srch", f->height, 0);
	av_opt_set_int(c->sws, "src_format", f->format, 0);
	av_opt_set_int(c->sws, "dstw", f->width, 0);
	av_opt_set_int(c->sws, "dsth", f->height, 0);
	av_opt_set_int(c->sws, "dst_format", dst_fmt, 0);
	av_opt_set_int(c->sws, "sws_flags", SWS_BILINEAR | SWS_ACCURATE_RND, 0);
	av_opt_set_int(c->sws, "src_range", full, 0);
	av_opt_set_int(c->sws, "dst_range", rgb_dst ? 1 : full, 0);
	if (sws_init_context(c->sws, NULL, NULL) < 0)
		return 0;
	/* The matrix (and the same ranges again); refused harmlessly for RGB sources. */
	sws_setColorspaceDetails(c->sws, sws_getCoefficients(cs), full, sws_getCoefficients(SWS_CS_DEFAULT),
	                         rgb_dst ? 1 : full, 0, 1 << 16, 1 << 16);
	c->out->format = dst_fmt;
	c->out->width = f->width;
	c->out->height = f->height;
	if (av_frame_get_buffer(c->out, 64) < 0)
		return 0;
	c->w = f->width;
	c->h = f->height;
	c->src_fmt = f->format;
	c->src_full = full;
	c->cs = cs;
	return 1;
}

/* Converts the current frame for luma (rgb = 0) or RGB24 (rgb = 1). */
static wl_status convert(wl_decoder *dec, struct conv **cp, int rgb, wl_err *err)
{
	const AVFrame *f = dec->frame;
	const AVPixFmtDescriptor *d = av_pix_fmt_desc_get((enum AVPixelFormat)f->format);
	int full = frame_full_range(f);
	int cs = (f->colorspace >= 0 && f->colorspace <= 10) ? (int)f->colorspace : SWS_CS_DEFAULT;
	enum AVPixelFormat dst = rgb ? AV_PIX_FMT_RGB24
	                         : (d && (d->flags & AV_PIX_FMT_FLAG_RGB))
	                                 ? AV_PIX_FMT_GRAY8
	                                 : yuv8_like((enum AVPixelFormat)f->format);
	struct conv *c = *cp;

	if (!c) {
		c = *cp = calloc(1, sizeof *c);
		if (!c)
			return wl_err_set(err, WL_ENOMEM, "%s: out of memory converting a frame",
			                  dec->info.path);
	}
	if (!c->sws || c->w != f->width || c->h != f->height || c->src_fmt != f->format ||
	    c->src_full != full || c->cs != cs) {
		if (!conv_setup(c, f, dst, full, cs)) {
			c->w = 0; /* set up again next time */
			return wl_err_set(
			        err, WL_EDECODE,
			        "%s: frame %lld: cannot convert pixel format '%s' to 8 bits: re-encode the "
			        "clip as yuv420p",
			        dec->info.path, (long long)dec->nframes,
			        av_get_pix_fmt_name((enum AVPixelFormat)f->format));
		}
	}
	sws_scale(c->sws, (const uint8_t *const *)f->data, f->linesize, 0, f->height, c->out->data,
	          c->out->linesize);
	return WL_OK;
}

static wl_status make_planes(wl_decoder *dec, wl_err *err)
{
	const AVFrame *f = dec->frame;
	wl_status st = WL_OK;

	if (luma_is_direct((enum AVPixelFormat)f->format)) {
		dec->out.luma = f->data[0];
		dec->out.luma_stride = f->linesize[0];
	} else {
		st = convert(dec, &dec->luma_conv, 0, err);
		if (st == WL_OK) {
			dec->out.luma = dec->luma_conv->out->data[0];
			dec->out.luma_stride = dec->luma_conv->out->linesize[0];
		}
	}
	dec->out.rgb = NULL;
	dec->out.rgb_stride = 0;
	if (st == WL_OK && (dec->flags & WL_DECODE_RGB)) {
		st = convert(dec, &dec->rgb_conv, 1, err);
		if (st == WL_OK) {
			dec->out.rgb = dec->rgb_conv->out->data[0];
			dec->out.rgb_stride = dec->rgb_conv->out->linesize[0];
		}
	}
	return st;
}

/* ---- the decoding loop -------------------------------------------------- */

/* The recording stops at its first error; the stream goes on. */
static void rec_error(wl_decoder *dec, int averr)
{
	char buf[AV_ERROR_MAX_STRING_SIZE] = "";
	av_strerror(averr, buf, sizeof buf);
	dec->rec_failed = 1;
	snprintf(dec->rec_error, sizeof dec->rec_error, "cannot write the recording: %s", buf);
}

/* The arrival time and input lag of the packet with presentation time pts
 * (the last packet's when it is no longer remembered). */
static void arrival_of(const wl_decoder *dec, int64_t pts, wl_frame *o)
{
	int n = dec->narrival < ARRIVAL_KEEP ? dec->narrival : ARRIVAL_KEEP;
	o->arrival_s = dec->last_arrival;
	o->lag_s = NAN;
	if (pts != AV_NOPTS_VALUE)
		for (int i = 0; i < n; i++)
			if (dec->arrival[i].pts == pts) {
				o->arrival_s = dec->arrival[i].t;
				o->lag_s = dec->arrival[i].lag;
				return;
			}
}

/* Times the frame just received and fills dec->out. */
static wl_status emit(wl_decoder *dec, const wl_frame **frame, wl_err *err)
{
	const AVFrame *f = dec->frame;
	int64_t ts = f->best_effort_timestamp;
	wl_frame *o = &dec->out;
	wl_status st;

	o->time_guessed = 0;
	if (ts != AV_NOPTS_VALUE && !dec->have_origin) {
		dec->have_origin = 1;
		dec->origin_ts = ts;
		dec->origin_offset_s = dec->have_last ? dec->last_t_s + dec->guess_dt_s : 0.0;
		dec->info.first_pts_s = (double)ts * dec->tb_s - dec->origin_offset_s;
	}
	arrival_of(dec, f->pts != AV_NOPTS_VALUE ? f->pts : ts, o);
	if (dec->no_timestamps)
		ts = AV_NOPTS_VALUE; /* libavformat's are made up at a nominal rate */
	if (ts != AV_NOPTS_VALUE) {
		o->t_s = ts_to_t(dec, ts);
	} else if (dec->o.live) {
		/* A live source without timestamps (HTTP MJPEG): the arrival is
		 * the best clock there is, and says so. */
		if (!dec->have_last)
			dec->arrival_origin_s = o->arrival_s;
		o->t_s = o->arrival_s - dec->arrival_origin_s;
		if (dec->have_last && o->t_s <= dec->last_t_s)
			o->t_s = dec->last_t_s + 1e-6;
		o->time_guessed = 1;
	} else {
		/* No timestamp: continue from the last frame at the nominal rate, and say so. */
		o->t_s = dec->have_last ? dec->last_t_s + dec->guess_dt_s : 0.0;
		o->time_guessed = 1;
	}
	/* frames skipped to catch up keep their numbers: the index counts
	 * every frame of the stream seen so far */
	o->index = dec->after_seek ? -1 : dec->nframes + dec->skipped;
	o->width_px = f->width;
	o->height_px = f->height;
	o->corrupt = (f->flags & AV_FRAME_FLAG_CORRUPT) || f->decode_error_flags;
	if (o->corrupt)
		add_damage(dec, o->index, o->t_s, "frame decoded with errors (concealed)", 0);
	dec->last_t_s = o->t_s;
	dec->have_last = 1;
	dec->nframes++;
	if (dec->rec && !dec->rec_failed) {
		int ret = wl_rec_ready(dec->rec, dec->cc, dec->st);
		if (ret < 0)
			rec_error(dec, ret);
	}
	st = make_planes(dec, err);
	if (st != WL_OK)
		return st;
	*frame = o;
	return WL_OK;
}

/* --realtime: waits until the packet's time has come on the wall clock
 * (measured from the first packet), in short sleeps that watch for a stop. */
static void pace(wl_decoder *dec, double ts_s)
{
	double wait;
	if (!dec->rt_started) {
		dec->rt_started = 1;
		dec->rt_wall0 = mono_now();
		dec->rt_ts0 = ts_s;
		return;
	}
	while ((wait = dec->rt_wall0 + (ts_s - dec->rt_ts0) - mono_now()) > 0) {
		struct timespec ts;
		if (dec->o.interrupt && dec->o.interrupt(dec->o.interrupt_ctx))
			return;
		if (wait > 0.02)
			wait = 0.02;
		ts.tv_sec = 0;
		ts.tv_nsec = (long)(wait * 1e9);
		nanosleep(&ts, NULL);
	}
}

/* A timestamp jump larger than this is a new time line (a sender that
 * restarted), not a decoder that fell behind. */
#define LAG_DISCONTINUITY_S 10.0

/*
 * max_lag_s: how far the input runs behind the stream's own clock is
 * (arrival - timestamp) less its least value so far (the least transport
 * delay seen); a burst of packets that were held back at the start reads
 * as no lag, since the least offset is taken as they come.  Past max_lag_s
 * packets are dropped up to a key frame that is back within half of it,
 * and the decoder starts again from there.  Returns 0 to drop the packet.
 */
static double input_lag(wl_decoder *dec, double ts_s, double now)
{
	double off = now - ts_s, lag;
	if (!dec->have_off || off < dec->min_off) {
		dec->min_off = off;
		dec->have_off = 1;
	}
	lag = off - dec->min_off;
	if (lag > LAG_DISCONTINUITY_S) {
		dec->min_off = off;
		lag = 0;
	}
	return lag;
}

static int catch_up(wl_decoder *dec, double lag)
{
	if (!dec->skipping && lag > dec->o.max_lag_s)
		dec->skipping = 1;
	if (!dec->skipping)
		return 1;
	/* a stream whose demuxer marks no key frames resumes when on time */
	if ((!dec->seen_key || (dec->pkt->flags & AV_PKT_FLAG_KEY)) && lag <= 0.5 * dec->o.max_lag_s) {
		dec->skipping = 0;
		avcodec_flush_buffers(dec->cc);
		return 1;
	}
	dec->skipped++;
	return 0;
}

/* True when an H.264 or HEVC packet in Annex B form (start codes, as in
 * MPEG-TS and raw streams) holds an IDR picture (H.264 NAL type 5; HEVC
 * types 16-21, the random access points).  MPEG-TS read without the parser
 * leaves key flags unset; the recording and the catching up need them. */
static int annexb_key(enum AVCodecID id, const uint8_t *d, int n)
{
	for (int i = 0; i + 3 < n; i++) {
		int t;
		if (d[i] != 0 || d[i + 1] != 0 || d[i + 2] != 1)
			continue;
		if (id == AV_CODEC_ID_H264 && (d[i + 3] & 0x1f) == 5)
			return 1;
		t = (d[i + 3] >> 1) & 0x3f;
		if (id == AV_CODEC_ID_HEVC && t >= 16 && t <= 21)
			return 1;
		i += 2;
	}
	return 0;
}

/* Marks key frames the demuxer left unmarked: intra-only codecs always,
 * H.264 and HEVC by their NAL units. */
static void mark_key(wl_decoder *dec, AVPacket *p)
{
	const AVCodecDescriptor *cd = avcodec_descriptor_get(dec->cc->codec_id);
	if (p->flags & AV_PKT_FLAG_KEY)
		return;
	if ((cd && (cd->props & AV_CODEC_PROP_INTRA_ONLY)) || annexb_key(dec->cc->codec_id, p->data, p->size))
		p->flags |= AV_PKT_FLAG_KEY;
}

/* A packet of our stream came in: paced (realtime), recorded, its arrival
 * remembered, and dropped when catching up.  Returns 0 to drop it. */
static int arrive(wl_decoder *dec)
{
	AVPacket *p = dec->pkt;
	int64_t ts = p->dts != AV_NOPTS_VALUE ? p->dts : p->pts;
	double ts_s = ts != AV_NOPTS_VALUE && !dec->no_timestamps ? (double)ts * dec->tb_s : NAN;
	double now, lag;
	if (dec->o.realtime && isfinite(ts_s))
		pace(dec, ts_s);
	now = mono_now();
	dec->last_arrival = now;
	if (dec->o.live)
		mark_key(dec, p);
	if (dec->rec && !dec->rec_failed) {
		int ret = wl_rec_packet(dec->rec, p, dec->st);
		if (ret < 0)
			rec_error(dec, ret);
	}
	/* what a demuxer flushes after the end waited for the end, not in a
	 * buffer: no lag for it */
	lag = dec->o.live && isfinite(ts_s) && dec->end == WL_END_NONE ? input_lag(dec, ts_s, now) : NAN;
	dec->arrival[dec->narrival % ARRIVAL_KEEP].pts = p->pts != AV_NOPTS_VALUE ? p->pts : p->dts;
	dec->arrival[dec->narrival % ARRIVAL_KEEP].t = now;
	dec->arrival[dec->narrival % ARRIVAL_KEEP].lag = lag;
	dec->narrival++;
	if (p->flags & AV_PKT_FLAG_KEY)
		dec->seen_key = 1;
	/* the packets a demuxer flushes after the end (a stop or a timeout)
	 * are late by then, but they are the stream's last frames: kept */
	if (dec->o.live && dec->o.max_lag_s > 0 && isfinite(ts_s) && dec->end == WL_END_NONE)
		return catch_up(dec, lag);
	return 1;
}

/* Why reading stopped (a stop or timeout is set by interrupt_cb). */
static void note_end(wl_decoder *dec, int ret)
{
	char buf[AV_ERROR_MAX_STRING_SIZE] = "";
	if (dec->end == WL_END_STOPPED || dec->end == WL_END_TIMEOUT)
		return;
	/* a demuxer that meets the end of its input in mid-packet (MJPEG over
	 * HTTP when the server closes) says invalid data: an end all the same */
	if (ret == AVERROR_EOF || (dec->fmt->pb && dec->fmt->pb->eof_reached && !dec->fmt->pb->error)) {
		dec->end = WL_END_EOF;
		snprintf(dec->end_what, sizeof dec->end_what, "end of stream");
		return;
	}
	av_strerror(ret, buf, sizeof buf);
	dec->end = WL_END_ERROR;
	snprintf(dec->end_what, sizeof dec->end_what, "%s", buf);
}

/* Feeds the decoder one packet of our stream, or the NULL packet at the end. */
static void feed(wl_decoder *dec)
{
	int ret;

	if (!dec->pkt_pending) {
		ret = av_read_frame(dec->fmt, dec->pkt);
		if (ret < 0) {
			note_end(dec, ret);
			if (ret != AVERROR_EOF)
				add_damage(dec, next_index(dec), dec->have_last ? dec->last_t_s : NAN,
				           "read error, stream ends here", ret);
			avcodec_send_packet(dec->cc, NULL);
			dec->draining = 1;
			return;
		}
		dec->t_last_read = mono_now();
		if (dec->pkt->stream_index != dec->sidx || !arrive(dec)) {
			av_packet_unref(dec->pkt);
			return;
		}
		if (dec->pkt->flags & AV_PKT_FLAG_CORRUPT)
			add_damage(dec, packet_index(dec, dec->pkt->pts), ts_to_t(dec, dec->pkt->pts),
			           "packet is corrupt or cut short", 0);
	}
	ret = avcodec_send_packet(dec->cc, dec->pkt);
	if (ret == AVERROR(EAGAIN)) {
		dec->pkt_pending = 1; /* keep it: the decoder wants frames taken out first */
		return;
	}
	if (ret < 0)
		add_damage(dec, packet_index(dec, dec->pkt->pts), ts_to_t(dec, dec->pkt->pts),
		           "packet rejected by the decoder", ret);
	dec->pkt_pending = 0;
	av_packet_unref(dec->pkt);
}

/*
 * A clip cut short (a copy that stopped, a full card) often ends without a
 * read error: the demuxer just meets the end of the file.  The container's
 * own frame count and stream duration then say more than was decoded.  Two
 * frames of slack allow for edit lists that drop a frame or two; the
 * duration test allows 0.5 s more, and uses the file's duration only when
 * the video is its only stream (audio may run longer).
 */
static void check_end(wl_decoder *dec)
{
	const wl_video_info *in = &dec->info;
	double dur = NAN, dt, span, end;
	char what[96];

	if (dec->end_checked || dec->after_seek || dec->nframes == 0)
		return;
	dec->end_checked = 1;
	if (in->frames_hint > 0 && dec->nframes + 2 < in->frames_hint) {
		snprintf(what, sizeof what,
		         "stream ends early: %lld of the %lld frames listed (file cut short?)",
		         (long long)dec->nframes, (long long)in->frames_hint);
		add_damage(dec, dec->nframes, dec->last_t_s, what, 0);
		return;
	}
	if (dec->st->duration != AV_NOPTS_VALUE && dec->st->duration > 0)
		dur = (double)dec->st->duration * dec->tb_s;
	else if (dec->fmt->nb_streams == 1 && dec->fmt->duration != AV_NOPTS_VALUE && dec->fmt->duration > 0)
		dur = (double)dec->fmt->duration / AV_TIME_BASE; /* only one stream: it is the video's */
	dt = dec->nframes > 1 ? dec->last_t_s / (double)(dec->nframes - 1) : dec->guess_dt_s;
	span = dec->last_t_s + dt;
	/* Containers differ on whether the duration counts from zero or from the
	 * first timestamp (Matroska gives the end time): short on both counts. */
	end = in->first_pts_s + span;
	if (isfinite(dur) && span + 2 * dt + 0.5 < dur && (!isfinite(end) || end + 2 * dt + 0.5 < dur)) {
		char b1[WL_NUMBUF], b2[WL_NUMBUF];
		snprintf(what, sizeof what,
		         "stream ends early: at %s s of the %s s announced (file cut short?)",
		         wl_fmt_fixed(b1, span, 3), wl_fmt_fixed(b2, dur, 3));
		add_damage(dec, dec->nframes, dec->last_t_s, what, 0);
	}
}

wl_status wl_decoder_next(wl_decoder *dec, const wl_frame **frame, wl_err *err)
{
	*frame = NULL;
	av_frame_unref(dec->frame);
	while (!dec->finished) {
		int ret = avcodec_receive_frame(dec->cc, dec->frame);
		if (ret == 0 && size_too_large(dec->frame->width, dec->frame->height)) {
			add_damage(dec, next_index(dec), NAN,
			           "frame larger than the decoder's bound, skipped", 0);
			av_frame_unref(dec->frame);
			continue;
		}
		if (ret == 0) {
			dec->errors_in_a_row = 0;
			return emit(dec, frame, err);
		}
		if (ret == AVERROR_EOF) {
			dec->finished = 1;
			check_end(dec);
		} else if (ret != AVERROR(EAGAIN)) {
			add_damage(dec, next_index(dec), NAN, "frame could not be decoded", ret);
			if (++dec->errors_in_a_row > MAX_ERRORS_IN_A_ROW) {
				add_damage(dec, next_index(dec), NAN,
				           "too many errors in a row, decoding stopped", 0);
				dec->finished = 1;
			}
		} else if (dec->draining) {
			dec->finished = 1; /* EAGAIN after the NULL packet: nothing more will come */
		} else {
			feed(dec);
		}
	}
	if (dec->nframes == 0)
		return wl_err_set(err, WL_EDECODE,
		                  "%s: no frame could be decoded (%lld errors): the clip is damaged or not a "
		                  "video; try playing or re-exporting it",
		                  dec->info.path, (long long)dec->ndamage);
	return WL_OK;
}

wl_status wl_decoder_seek(wl_decoder *dec, double t_s, wl_err *err)
{
	const wl_frame *f;
	int64_t target;
	wl_status st;
	int ret;

	if (!isfinite(t_s))
		return wl_err_set(err, WL_EINVAL, "%s: cannot seek to a time that is not a number",
		                  dec->info.path);
	if (!dec->have_origin) {
		/* The time origin is the first frame: decode it first. */
		if (dec->nframes == 0) {
			st = wl_decoder_next(dec, &f, err);
			if (st != WL_OK)
				return st;
		}
		if (!dec->have_origin)
			return wl_err_set(err, WL_EDECODE,
			                  "%s: cannot seek: the first frame has no timestamp",
			                  dec->info.path);
	}
	target = dec->origin_ts + (int64_t)llround((t_s - dec->origin_offset_s) / dec->tb_s);
	if (t_s <= 0)
		target = dec->origin_ts;
	ret = av_seek_frame(dec->fmt, dec->sidx, target, AVSEEK_FLAG_BACKWARD);
	if (ret < 0)
		ret = avformat_seek_file(dec->fmt, dec->sidx, INT64_MIN, target, target, 0);
	if (ret < 0)
		return av_fail(err, dec->info.path, "cannot seek", ret, "decode from the start instead");
	avcodec_flush_buffers(dec->cc);
	av_frame_unref(dec->frame);
	av_packet_unref(dec->pkt);
	dec->pkt_pending = 0;
	dec->draining = 0;
	dec->finished = 0;
	dec->errors_in_a_row = 0;
	dec->after_seek = 1;
	dec->end_checked = 1;
	return WL_OK;
}

wl_decode_end wl_decoder_end(const wl_decoder *dec, const char **what)
{
	if (what)
		*what = dec->end_what;
	return dec->end;
}

int64_t wl_decoder_skipped(const wl_decoder *dec)
{
	return dec->skipped;
}

const char *wl_decoder_record_error(const wl_decoder *dec)
{
	return dec->rec_failed ? dec->rec_error : NULL;
}

wl_status wl_decoder_close_record(wl_decoder *dec, wl_err *err)
{
	wl_status st = wl_rec_close(dec->rec, err);
	dec->rec = NULL;
	return st;
}

int64_t wl_decoder_frames(const wl_decoder *dec)
{
	return dec->nframes;
}

int64_t wl_decoder_damage_count(const wl_decoder *dec)
{
	return dec->ndamage;
}

const wl_damage *wl_decoder_damage(const wl_decoder *dec, int *n)
{
	*n = dec->ndamage < WL_DAMAGE_KEEP ? (int)dec->ndamage : WL_DAMAGE_KEEP;
	return dec->damage;
}

void wl_decoder_destroy(wl_decoder *dec)
{
	if (!dec)
		return;
	wl_rec_close(dec->rec, NULL);
	conv_free(dec->luma_conv);
	conv_free(dec->rgb_conv);
	av_frame_free(&dec->frame);
	av_packet_free(&dec->pkt);
	avcodec_free_context(&dec->cc);
	avformat_close_input(&dec->fmt);
	free(dec);
}
