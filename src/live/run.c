/*
 * run.c: a live run (live.h, wl_live_run).  An input thread opens the
 * source (again after a drop, with reconnect), decodes each frame with low
 * delay and copies it into one of a few slots; the calling thread takes the
 * oldest waiting frame, tracks it, filters, publishes a packet per robot
 * and appends the frame's RAW.csv rows with one write.
 *
 * Bounded latency: a frame is never queued behind more than the slots
 * hold.  When tracking falls behind, a waiting frame older than max_delay_s
 * is dropped as soon as a newer one waits; when every slot is taken the
 * input waits until the oldest waiting frame is that old, then gives its
 * slot to the newest.  Both are counted as drops.
 * The decoder itself skips to a key frame when it falls behind (decode.h).
 *
 * Time across reconnects: each connection's timestamps start again, so a
 * new connection's frames are placed after the last frame of the previous
 * one by the wall-clock gap between them; frame numbers go on counting.
 */
#define _POSIX_C_SOURCE 200809L
#include "live/live.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/random.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#define NSLOTS 4
#define WAIT_STEP_S 0.05 /* the tracking thread looks at the clock this often while idle */

enum { S_FREE = 0, S_FILLING, S_PENDING, S_BUSY };

typedef struct {
	int state;
	uint64_t order; /* hand-over order */
	uint8_t *luma, *rgb;
	size_t luma_cap, rgb_cap;
	int w, h, rotation_deg;
	double t_s, arrival_s, lag_s;
	int64_t index;
} slot;

typedef struct {
	const wl_live_opts *lo;
	int want_rgb;
	atomic_int stop; /* the tracking thread asks the input to stop */
	pthread_mutex_t m;
	pthread_cond_t cv;
	slot slots[NSLOTS];
	uint64_t order;
	/* written by the input thread under m */
	int eof;
	wl_status st; /* the input's failure to open (without reconnect) */
	wl_err err;
	int64_t frames_in, dropped, skipped;
	int reconnects;
	double interval_s;  /* frame interval, running mean of t_s steps */
	double max_delay_s; /* in force (set by the tracking thread) */
	wl_decode_end end;
	char end_what[256];
} shared;

static double mono_now(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static double wall_now(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_REALTIME, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

void wl_live_opts_init(wl_live_opts *o)
{
	memset(o, 0, sizeof *o);
	wl_decode_opts_init(&o->input);
	o->input.threads = 0;
	o->input.timeout_s = 5.0;
	o->input.open_timeout_s = 30.0;
	o->input.max_lag_s = 0.5;
	o->packet = WL_PUB_JSON;
	o->reconnect_wait_s = 1.0;
	o->status_period_s = 1.0;
	wl_live_filter_cfg_init(&o->filter);
}

static int user_stop(const wl_live_opts *lo)
{
	return lo->interrupt && lo->interrupt(lo->interrupt_ctx);
}

static int input_interrupt(void *ctx)
{
	shared *s = ctx;
	return atomic_load(&s->stop) || user_stop(s->lo);
}

/* sleeps up to t seconds, returning early (1) when asked to stop */
static int nap(shared *s, double t)
{
	double until = mono_now() + t;
	while (mono_now() < until) {
		struct timespec ts = {0, 20 * 1000 * 1000};
		if (input_interrupt(s))
			return 1;
		nanosleep(&ts, NULL);
	}
	return input_interrupt(s);
}

/* ------------------------------------------------------------ input side */

static int grow(uint8_t **buf, size_t *cap, size_t need)
{
	uint8_t *b;
	if (*cap >= need)
		return 1;
	if (!(b = realloc(*buf, need)))
		return 0;
	*buf = b;
	*cap = need;
	return 1;
}

static void copy_plane(uint8_t *dst, size_t row, const uint8_t *src, int stride, int h)
{
	for (int y = 0; y < h; y++)
		memcpy(dst + (size_t)y * row, src + (size_t)y * stride, row);
}

/* A slot for the next frame (under s->m): a free one; else, once the
 * oldest waiting frame is older than max_delay_s (or at a stop), that one,
 * dropped.  Until then the input waits: a burst of fresh frames (the
 * start, a network hiccup) is tracked, not dropped, while it is fresh. */
static slot *slot_for_input(shared *s)
{
	for (;;) {
		slot *old = NULL;
		double age_left;
		struct timespec until;
		for (int i = 0; i < NSLOTS; i++)
			if (s->slots[i].state == S_FREE)
				return &s->slots[i];
		/* one slot is tracked at most, this thread fills none: some wait */
		for (int i = 0; i < NSLOTS; i++)
			if (s->slots[i].state == S_PENDING && (!old || s->slots[i].order < old->order))
				old = &s->slots[i];
		age_left = old ? old->arrival_s + s->max_delay_s - mono_now() : WAIT_STEP_S;
		if (old && (age_left <= 0 || input_interrupt(s))) {
			s->dropped++;
			return old;
		}
		if (age_left > WAIT_STEP_S)
			age_left = WAIT_STEP_S;
		clock_gettime(CLOCK_REALTIME, &until);
		until.tv_nsec += (long)(age_left * 1e9);
		until.tv_sec += until.tv_nsec / 1000000000L;
		until.tv_nsec %= 1000000000L;
		pthread_cond_timedwait(&s->cv, &s->m, &until);
	}
}

/* Hands a decoded frame to tracking (slot_for_input).  Returns 0 when out
 * of memory. */
static int hand_over(shared *s, const wl_frame *f, double t_off, int64_t idx_off, int rotation_deg)
{
	slot *sl;
	int ok;
	pthread_mutex_lock(&s->m);
	sl = slot_for_input(s);
	sl->state = S_FILLING;
	pthread_mutex_unlock(&s->m);

	ok = grow(&sl->luma, &sl->luma_cap, (size_t)f->width_px * f->height_px) &&
	     (!s->want_rgb || grow(&sl->rgb, &sl->rgb_cap, (size_t)f->width_px * f->height_px * 3));
	if (ok) {
		copy_plane(sl->luma, (size_t)f->width_px, f->luma, f->luma_stride, f->height_px);
		if (s->want_rgb)
			copy_plane(sl->rgb, (size_t)f->width_px * 3, f->rgb, f->rgb_stride, f->height_px);
		sl->w = f->width_px;
		sl->h = f->height_px;
		sl->rotation_deg = rotation_deg;
		sl->t_s = f->t_s + t_off;
		sl->index = f->index + idx_off;
		sl->arrival_s = f->arrival_s;
		sl->lag_s = f->lag_s;
	}
	pthread_mutex_lock(&s->m);
	if (ok) {
		sl->state = S_PENDING;
		sl->order = ++s->order;
		s->frames_in++;
	} else {
		sl->state = S_FREE;
	}
	pthread_cond_broadcast(&s->cv);
	pthread_mutex_unlock(&s->m);
	return ok;
}

/* REC.ts -> REC-2.ts for the second connection, and so on */
static void numbered(const char *path, int k, char *out, size_t cap)
{
	const char *dot = strrchr(path, '.'), *slash = strrchr(path, '/');
	if (!dot || (slash && dot < slash))
		dot = path + strlen(path);
	snprintf(out, cap, "%.*s-%d%s", (int)(dot - path), path, k, dot);
}

/* The state of one input thread across connections. */
typedef struct {
	int opens;     /* successful opens */
	int failing;   /* open failures in a row */
	double last_t; /* the last frame handed over (run time), NaN before */
	double last_arrival;
	int64_t last_index;
	int64_t skipped_before; /* by earlier connections' decoders */
} input_state;

static wl_status open_source(shared *s, input_state *is, wl_decoder **dec, wl_err *e)
{
	const wl_live_opts *lo = s->lo;
	wl_decode_opts o = lo->input;
	char rec[1100];
	o.live = 1;
	o.flags = s->want_rgb ? WL_DECODE_RGB : 0;
	o.interrupt = input_interrupt;
	o.interrupt_ctx = s;
	o.diag = lo->diag;
	if (o.record_path && is->opens > 0) {
		numbered(o.record_path, is->opens + 1, rec, sizeof rec);
		o.record_path = rec;
		if (!lo->overwrite && access(rec, F_OK) == 0) {
			wl_diag_warn(lo->diag, "live", "%s exists: this connection is not recorded", rec);
			o.record_path = NULL;
		}
	}
	return wl_decoder_open_ex(lo->source, &o, dec, e);
}

/* Decodes one connection until it ends; returns its end. */
static wl_decode_end run_connection(shared *s, input_state *is, wl_decoder *dec, const char **what, wl_err *e)
{
	const wl_live_opts *lo = s->lo;
	const wl_video_info *info = wl_decoder_info(dec);
	double t_off = 0;
	int64_t idx_off = 0;
	int first = 1, rec_warned = 0;
	wl_decode_end end;
	wl_status st;
	for (;;) {
		const wl_frame *f = NULL;
		if ((st = wl_decoder_next(dec, &f, e)) != WL_OK || !f)
			break;
		if (first && isfinite(is->last_t)) {
			double gap = f->arrival_s - is->last_arrival;
			double dt = s->interval_s > 0 ? s->interval_s : 1.0 / 30;
			t_off = is->last_t + (gap > dt ? gap : dt) - f->t_s;
			idx_off = is->last_index + 1 - f->index;
		}
		first = 0;
		if (!hand_over(s, f, t_off, idx_off, info->rotation_deg)) {
			wl_err_set(e, WL_ENOMEM, "out of memory for a %dx%d frame", f->width_px,
			           f->height_px);
			st = WL_ENOMEM;
			break;
		}
		pthread_mutex_lock(&s->m);
		if (isfinite(is->last_t) && f->t_s + t_off > is->last_t) {
			double dt = f->t_s + t_off - is->last_t;
			s->interval_s = s->interval_s > 0 ? 0.9 * s->interval_s + 0.1 * dt : dt;
		}
		s->skipped = is->skipped_before + wl_decoder_skipped(dec);
		pthread_mutex_unlock(&s->m);
		is->last_t = f->t_s + t_off;
		is->last_index = f->index + idx_off;
		is->last_arrival = f->arrival_s;
		if (!rec_warned && wl_decoder_record_error(dec)) {
			wl_diag_warn(lo->diag, "live", "%s: %s: the stream goes on without recording",
			             lo->source, wl_decoder_record_error(dec));
			rec_warned = 1;
		}
	}
	is->skipped_before += wl_decoder_skipped(dec);
	pthread_mutex_lock(&s->m);
	s->skipped = is->skipped_before;
	pthread_mutex_unlock(&s->m);
	end = wl_decoder_end(dec, what);
	if (st != WL_OK && (end == WL_END_NONE || end == WL_END_EOF)) {
		end = WL_END_ERROR;
		*what = e->msg;
	}
	return end;
}

static void input_finish(shared *s, wl_decode_end end, const char *what)
{
	pthread_mutex_lock(&s->m);
	s->eof = 1;
	s->end = end;
	snprintf(s->end_what, sizeof s->end_what, "%s", what ? what : "");
	pthread_cond_broadcast(&s->cv);
	pthread_mutex_unlock(&s->m);
}

static void *input_main(void *arg)
{
	shared *s = arg;
	const wl_live_opts *lo = s->lo;
	input_state is = {0, 0, NAN, NAN, -1, 0};
	wl_decode_end end = WL_END_STOPPED;
	char what[512] = "stopped";
	for (;;) {
		wl_decoder *dec = NULL;
		const char *w = NULL;
		wl_err e;
		wl_err_clear(&e);
		if (open_source(s, &is, &dec, &e) != WL_OK) {
			if (input_interrupt(s))
				break;
			if (!lo->reconnect) {
				pthread_mutex_lock(&s->m);
				s->st = e.code ? e.code : WL_EIO;
				s->err = e;
				pthread_mutex_unlock(&s->m);
				end = WL_END_ERROR;
				snprintf(what, sizeof what, "%s", e.msg);
				break;
			}
			if (is.failing++ == 0)
				wl_diag_warn(lo->diag, "live", "%s: trying again every %.1f s", e.msg,
				             lo->reconnect_wait_s);
			if (nap(s, lo->reconnect_wait_s))
				break;
			continue;
		}
		if (is.opens++ > 0) {
			pthread_mutex_lock(&s->m);
			s->reconnects++;
			pthread_mutex_unlock(&s->m);
			wl_diag_warn(lo->diag, "live", "%s: connected again", lo->source);
		}
		is.failing = 0;
		end = run_connection(s, &is, dec, &w, &e);
		snprintf(what, sizeof what, "%s", w ? w : "");
		if (wl_decoder_close_record(dec, &e) != WL_OK)
			wl_diag_warn(lo->diag, "live", "%s", e.msg);
		wl_decoder_destroy(dec);
		if (end == WL_END_STOPPED || input_interrupt(s) || !lo->reconnect)
			break;
		wl_diag_warn(lo->diag, "live", "%s: the stream ended (%s): connecting again", lo->source,
		             what);
		if (nap(s, lo->reconnect_wait_s))
			break;
	}
	if (input_interrupt(s) && end != WL_END_ERROR) {
		end = WL_END_STOPPED;
		snprintf(what, sizeof what, "stopped");
	}
	input_finish(s, end, what);
	return NULL;
}

/* ---------------------------------------------------------- tracking side */

/* Takes the next frame to track (NULL: nothing within WAIT_STEP_S, or the
 * input ended: *done).  Waiting frames older than max_delay are dropped
 * while a newer one waits. */
static slot *take(shared *s, double max_delay, int *done)
{
	struct timespec until;
	slot *pick = NULL;
	int npending;
	clock_gettime(CLOCK_REALTIME, &until); /* the condition variable's clock */
	until.tv_nsec += (long)(WAIT_STEP_S * 1e9);
	if (until.tv_nsec >= 1000000000L) {
		until.tv_sec++;
		until.tv_nsec -= 1000000000L;
	}
	pthread_mutex_lock(&s->m);
	for (;;) {
		npending = 0;
		for (int i = 0; i < NSLOTS; i++)
			npending += s->slots[i].state == S_PENDING;
		if (npending || s->eof)
			break;
		if (pthread_cond_timedwait(&s->cv, &s->m, &until) == ETIMEDOUT)
			break;
	}
	*done = !npending && s->eof;
	for (; npending > 0; npending--) {
		double now = mono_now();
		slot *old = NULL;
		for (int i = 0; i < NSLOTS; i++)
			if (s->slots[i].state == S_PENDING && (!old || s->slots[i].order < old->order))
				old = &s->slots[i];
		if (npending > 1 && now - old->arrival_s > max_delay) {
			old->state = S_FREE;
			s->dropped++;
			continue;
		}
		old->state = S_BUSY;
		pick = old;
		break;
	}
	pthread_mutex_unlock(&s->m);
	return pick;
}

static void release(shared *s, slot *sl)
{
	pthread_mutex_lock(&s->m);
	sl->state = S_FREE;
	pthread_cond_broadcast(&s->cv);
	pthread_mutex_unlock(&s->m);
}

/* One robot's filter, found by id. */
typedef struct {
	int id;
	int seen; /* found at least once */
	wl_live_filter f;
} robot_filter;

typedef struct {
	const wl_live_opts *lo;
	const wl_track_opts *to;
	const wl_calib *cal;
	const char *cal_path;
	shared *s;
	wl_tracker *tr;
	int tr_w, tr_h, tr_rot;
	wl_publisher *pub;
	FILE *raw_fp;
	wl_raw_writer *raw;
	int raw_failed;
	char raw_error[256];
	robot_filter filters[WL_TRACK_MAX_ROBOTS];
	int nfilters, robots_seen;
	uint32_t session;
	uint64_t seq;
	wl_latency run_lat, period_lat;
	double period_lag_max, run_lag_max; /* input lag (decode.h wl_frame.lag_s), s */
	int64_t frames_tracked;
	int robots_listed, robots_ok;
	/* status */
	double t_start, t_status;
	int64_t in_at_status, tracked_at_status;
	int64_t send_warned;
} tracking;

static robot_filter *filter_of(tracking *k, int id)
{
	for (int i = 0; i < k->nfilters; i++)
		if (k->filters[i].id == id)
			return &k->filters[i];
	if (k->nfilters >= WL_TRACK_MAX_ROBOTS)
		return NULL;
	k->filters[k->nfilters].id = id;
	wl_live_filter_init(&k->filters[k->nfilters].f);
	return &k->filters[k->nfilters++];
}

static wl_status ensure_tracker(tracking *k, const slot *sl, wl_err *err)
{
	wl_status st;
	if (k->tr && k->tr_w == sl->w && k->tr_h == sl->h && k->tr_rot == sl->rotation_deg)
		return WL_OK;
	if (k->tr)
		wl_diag_warn(k->lo->diag, "live",
		             "%s: the frames are now %dx%d (were %dx%d): tracking starts afresh",
		             k->lo->source, sl->w, sl->h, k->tr_w, k->tr_h);
	wl_tracker_destroy(k->tr);
	k->tr = NULL;
	if ((st = wl_tracker_create(k->to, k->cal, k->cal_path, sl->w, sl->h, sl->rotation_deg, &k->tr,
	                            err)) != WL_OK)
		return st;
	k->tr_w = sl->w;
	k->tr_h = sl->h;
	k->tr_rot = sl->rotation_deg;
	return WL_OK;
}

/* the frame's rows, flushed with one write (whole lines if killed) */
static void record_raw(tracking *k, const slot *sl, const wl_track_obs *obs, int n)
{
	if (!k->raw || k->raw_failed)
		return;
	wl_track_put_rows(k->raw, sl->t_s, sl->index, obs, n);
	if (fflush(k->raw_fp) != 0 || ferror(k->raw_fp)) {
		k->raw_failed = 1;
		snprintf(k->raw_error, sizeof k->raw_error,
		         "%s: cannot write at frame %lld: %s: the file holds whole lines up to there",
		         k->lo->raw_path, (long long)sl->index, strerror(errno));
		wl_diag_warn(k->lo->diag, "live", "%s; publishing goes on", k->raw_error);
	}
}

static void publish(tracking *k, const slot *sl, const wl_track_obs *obs, int n)
{
	double wall_off = wall_now() - mono_now();
	k->robots_listed = n;
	k->robots_ok = 0;
	for (int i = 0; i < n; i++) {
		const wl_track_obs *o = &obs[i];
		robot_filter *rf = filter_of(k, o->id);
		wl_live_state ls;
		wl_pose p;
		memset(&p, 0, sizeof p);
		if (rf) {
			wl_live_filter_step(&rf->f, &k->lo->filter, sl->t_s, o->ok ? o->x_m : NAN,
			                    o->ok ? o->y_m : NAN, o->ok ? o->heading_rad : NAN, &ls);
			if (o->ok && !rf->seen) {
				rf->seen = 1;
				k->robots_seen++;
			}
		}
		k->robots_ok += o->ok;
		p.session = k->session;
		p.seq = k->seq++;
		p.frame = sl->index;
		p.id = o->id;
		p.status = o->ok ? WL_POSE_OK : WL_POSE_LOST;
		p.t_s = sl->t_s;
		p.arrival_unix_s = sl->arrival_s + wall_off;
		p.x_m = o->ok ? o->x_m : NAN;
		p.y_m = o->ok ? o->y_m : NAN;
		p.heading_rad = o->ok ? o->heading_rad : NAN;
		p.vx_mps = rf && o->ok ? ls.vx_mps : NAN;
		p.vy_mps = rf && o->ok ? ls.vy_mps : NAN;
		p.yaw_rate_radps = rf && o->ok ? ls.yaw_rate_radps : NAN;
		p.latency_ms = (mono_now() - sl->arrival_s) * 1e3;
		wl_publisher_send(k->pub, &p);
	}
}

static wl_status track_one(tracking *k, const slot *sl, wl_err *err)
{
	wl_track_image img;
	const wl_track_obs *obs;
	int n;
	wl_status st;
	if ((st = ensure_tracker(k, sl, err)) != WL_OK)
		return st;
	memset(&img, 0, sizeof img);
	img.width_px = sl->w;
	img.height_px = sl->h;
	img.luma = sl->luma;
	img.luma_stride = sl->w;
	img.rgb = sl->rgb;
	img.rgb_stride = 3 * sl->w;
	img.t_s = sl->t_s;
	img.index = sl->index;
	if (k->lo->frame_hook)
		k->lo->frame_hook(k->lo->frame_hook_ctx, &img);
	if ((st = wl_tracker_frame(k->tr, &img, &obs, &n, err)) != WL_OK)
		return st;
	publish(k, sl, obs, n);
	{
		double lat = mono_now() - sl->arrival_s;
		wl_latency_add(&k->run_lat, lat);
		wl_latency_add(&k->period_lat, lat);
		if (sl->lag_s > k->period_lag_max)
			k->period_lag_max = sl->lag_s;
		if (sl->lag_s > k->run_lag_max)
			k->run_lag_max = sl->lag_s;
	}
	k->frames_tracked++;
	record_raw(k, sl, obs, n);
	return WL_OK;
}

static void fill_stats(tracking *k, wl_live_stats *st, double now, int period)
{
	shared *s = k->s;
	double dt = now - k->t_status;
	pthread_mutex_lock(&s->m);
	st->frames_in = s->frames_in;
	st->dropped = s->dropped;
	st->skipped = s->skipped;
	st->reconnects = s->reconnects;
	st->end = s->end;
	snprintf(st->end_what, sizeof st->end_what, "%s", s->end_what);
	pthread_mutex_unlock(&s->m);
	st->elapsed_s = now - k->t_start;
	st->frames_tracked = k->frames_tracked;
	if (period && dt > 0) {
		st->input_fps = (double)(st->frames_in - k->in_at_status) / dt;
		st->tracked_fps = (double)(k->frames_tracked - k->tracked_at_status) / dt;
		st->latency_median_ms = wl_latency_quantile(&k->period_lat, 0.5) * 1e3;
		st->latency_p99_ms = wl_latency_quantile(&k->period_lat, 0.99) * 1e3;
		st->input_lag_ms = k->period_lag_max * 1e3;
		k->period_lag_max = 0;
		k->in_at_status = st->frames_in;
		k->tracked_at_status = k->frames_tracked;
		k->t_status = now;
		wl_latency_reset(&k->period_lat);
	}
	st->robots_listed = k->robots_listed;
	st->robots_ok = k->robots_ok;
	st->robots_seen = k->robots_seen;
	if (k->pub)
		wl_publisher_counts(k->pub, &st->packets_sent, &st->send_failures, NULL);
	st->run_latency_median_ms = wl_latency_quantile(&k->run_lat, 0.5) * 1e3;
	st->run_latency_p99_ms = wl_latency_quantile(&k->run_lat, 0.99) * 1e3;
	st->run_latency_max_ms = k->run_lat.n ? k->run_lat.max_s * 1e3 : NAN;
	st->run_input_lag_max_ms = k->run_lag_max * 1e3;
}

static void status_tick(tracking *k, wl_live_stats *st, int force)
{
	double now = mono_now();
	const wl_live_opts *lo = k->lo;
	const char *first_error;
	int64_t failed;
	if (!force && now - k->t_status < lo->status_period_s)
		return;
	fill_stats(k, st, now, 1);
	wl_publisher_counts(k->pub, NULL, &failed, &first_error);
	if (failed > 0 && k->send_warned == 0) {
		wl_diag_warn(lo->diag, "live", "sending poses failed: %s: check the target addresses",
		             first_error);
		k->send_warned = failed;
	}
	if (lo->status)
		lo->status(lo->status_ctx, st);
}

/* -------------------------------------------------------------------- run */

static wl_status open_raw(tracking *k, wl_err *err)
{
	const wl_live_opts *lo = k->lo;
	int fd =
	        open(lo->raw_path, O_WRONLY | O_CREAT | O_CLOEXEC | (lo->overwrite ? O_TRUNC : O_EXCL), 0666);
	if (fd < 0)
		return wl_err_set(err, WL_EIO, "%s: cannot create RAW.csv: %s%s", lo->raw_path,
		                  strerror(errno),
		                  errno == EEXIST ? ": give another name, or --overwrite" : "");
	if (!(k->raw_fp = fdopen(fd, "w"))) {
		close(fd);
		return wl_err_set(err, WL_EIO, "%s: %s", lo->raw_path, strerror(errno));
	}
	/* a frame's rows (at most 64 robots of ~120 bytes) always fit the
	 * buffer, so each fflush is one write(2) of whole lines */
	setvbuf(k->raw_fp, NULL, _IOFBF, 1 << 16);
	if (wl_raw_open_fp(k->raw_fp, &k->raw, err) != WL_OK)
		return WL_ENOMEM;
	if (fflush(k->raw_fp) != 0)
		return wl_err_set(err, WL_EIO, "%s: cannot write: %s", lo->raw_path, strerror(errno));
	return WL_OK;
}

static wl_status close_raw(tracking *k, wl_err *err)
{
	wl_status st = WL_OK;
	if (!k->raw_fp)
		return WL_OK;
	wl_raw_commit(k->raw, NULL); /* frees the writer; the stream is ours */
	k->raw = NULL;
	if (fflush(k->raw_fp) != 0 || fsync(fileno(k->raw_fp)) != 0)
		st = wl_err_set(err, WL_EIO, "%s: cannot finish: %s", k->lo->raw_path, strerror(errno));
	if (fclose(k->raw_fp) != 0 && st == WL_OK)
		st = wl_err_set(err, WL_EIO, "%s: cannot close: %s", k->lo->raw_path, strerror(errno));
	k->raw_fp = NULL;
	/* no frame, no file: a source that never opened leaves nothing */
	if (k->frames_tracked == 0 && unlink(k->lo->raw_path) != 0 && st == WL_OK)
		st = wl_err_set(err, WL_EIO, "%s: cannot remove the empty file: %s", k->lo->raw_path,
		                strerror(errno));
	if (st == WL_OK && k->raw_failed)
		st = wl_err_set(err, WL_EIO, "%s", k->raw_error);
	return st;
}

static wl_status make_publisher(tracking *k, wl_err *err)
{
	const wl_live_opts *lo = k->lo;
	wl_status st;
	if ((st = wl_publisher_create(&k->pub, err)) != WL_OK)
		return st;
	for (const char *const *u = lo->publish; u && *u; u++)
		if ((st = wl_publisher_add_udp(k->pub, *u, lo->packet, err)) != WL_OK)
			return st;
	if (lo->lcm && (st = wl_publisher_add_lcm(k->pub, lo->lcm_provider, lo->lcm_channel, err)) != WL_OK)
		return st;
	return WL_OK;
}

static uint32_t new_session(uint32_t given)
{
	uint32_t v = given;
	if (v)
		return v;
	if (getrandom(&v, sizeof v, 0) != (ssize_t)sizeof v)
		v = (uint32_t)(wall_now() * 1e6) ^ (uint32_t)getpid();
	return v ? v : 1;
}

/* The tracking loop: until the input ends (all waiting frames tracked) or
 * a stop. */
static wl_status track_loop(tracking *k, wl_live_stats *st, wl_err *err)
{
	shared *s = k->s;
	const wl_live_opts *lo = k->lo;
	for (;;) {
		int done = 0;
		slot *sl;
		double max_delay;
		wl_status rc;
		if (user_stop(lo))
			return WL_OK;
		pthread_mutex_lock(&s->m);
		max_delay = lo->max_delay_s > 0 ? lo->max_delay_s
		            : s->interval_s > 0 ? s->interval_s
		                                : 1.0 / 30;
		s->max_delay_s = max_delay;
		pthread_mutex_unlock(&s->m);
		sl = take(s, max_delay, &done);
		if (sl) {
			rc = track_one(k, sl, err);
			release(s, sl);
			if (rc != WL_OK)
				return rc;
		}
		status_tick(k, st, 0);
		if (done)
			return WL_OK;
	}
}

static wl_status check_outputs(const wl_live_opts *lo, wl_err *err)
{
	if (!lo->source || !*lo->source)
		return wl_err_set(err, WL_EINVAL, "give the source: a device, a URL or a file");
	if (lo->input.record_path && !lo->overwrite && access(lo->input.record_path, F_OK) == 0)
		return wl_err_set(err, WL_EIO, "%s: exists: give another name, or --overwrite",
		                  lo->input.record_path);
	return wl_live_filter_cfg_check(&lo->filter, err);
}

wl_status wl_live_run(const wl_live_opts *lo, const wl_track_opts *to, const wl_calib *cal,
                      const char *cal_path, wl_live_stats *st, wl_err *err)
{
	shared *s = calloc(1, sizeof *s);
	tracking *k = calloc(1, sizeof *k);
	pthread_t th;
	int started = 0;
	wl_status rc;
	memset(st, 0, sizeof *st);
	if (!s || !k) {
		free(s);
		free(k);
		return wl_err_set(err, WL_ENOMEM, "out of memory starting the live run");
	}
	pthread_mutex_init(&s->m, NULL);
	pthread_cond_init(&s->cv, NULL);
	atomic_init(&s->stop, 0);
	s->lo = lo;
	s->want_rgb = to->mode == WL_TRACK_COLOUR;
	s->max_delay_s = lo->max_delay_s > 0 ? lo->max_delay_s : 1.0 / 30;
	k->lo = lo;
	k->to = to;
	k->cal = cal;
	k->cal_path = cal_path;
	k->s = s;
	k->session = new_session(lo->session);
	k->t_start = k->t_status = mono_now();
	if ((rc = check_outputs(lo, err)) != WL_OK || (rc = make_publisher(k, err)) != WL_OK)
		goto out;
	if (lo->raw_path && (rc = open_raw(k, err)) != WL_OK)
		goto out;
	{
		struct stat sb;
		if (!lo->input.realtime && !lo->input.format && stat(lo->source, &sb) == 0 &&
		    S_ISREG(sb.st_mode))
			wl_diag_warn(
			        lo->diag, "live",
			        "%s is a file: it is read as fast as it decodes, and frames are dropped when "
			        "tracking is slower; give --realtime to play it at its own rate",
			        lo->source);
	}
	if (pthread_create(&th, NULL, input_main, s) != 0) {
		rc = wl_err_set(err, WL_ENOMEM, "cannot start the input thread");
		goto out;
	}
	started = 1;
	rc = track_loop(k, st, err);
out:
	if (started) {
		atomic_store(&s->stop, 1);
		pthread_join(th, NULL);
	}
	{
		wl_err e2;
		wl_status rc2 = close_raw(k, &e2);
		if (rc == WL_OK && rc2 != WL_OK) {
			rc = rc2;
			if (err)
				*err = e2;
		}
	}
	if (rc == WL_OK && s->st != WL_OK) {
		rc = s->st;
		if (err)
			*err = s->err;
	}
	if (started)
		status_tick(k, st, 1);
	else
		fill_stats(k, st, mono_now(), 0);
	wl_tracker_destroy(k->tr);
	wl_publisher_destroy(k->pub);
	wl_raw_abort(k->raw);
	if (k->raw_fp)
		fclose(k->raw_fp);
	for (int i = 0; i < NSLOTS; i++) {
		free(s->slots[i].luma);
		free(s->slots[i].rgb);
	}
	pthread_mutex_destroy(&s->m);
	pthread_cond_destroy(&s->cv);
	free(s);
	free(k);
	return rc;
}
