/*
 * live.h: live tracking, the pipeline run on a camera or a network stream
 * as it arrives, for closed-loop control with the overhead camera as the
 * position sensor (`wakeline live`, docs/live.md):
 *
 *   source --decode (low delay)--> newest frames --track--> causal filter
 *          --> one pose packet per robot per frame (UDP JSON/binary, LCM)
 *          --> RAW.csv as it goes (clean and measure it afterwards)
 *
 * Bounded latency, never a queue: an input thread decodes and hands frames
 * over through a few slots; when tracking falls behind, a waiting frame
 * older than max_delay_s is dropped as soon as a newer one is there (and a
 * full set of slots gives its oldest frame to the newest), and drops are
 * counted; when decoding falls behind, the decoder skips to the next key
 * frame on time (decode.h, max_lag_s).  Tracking uses the tracker library
 * (track.h) with its search windows around the prediction, exactly as
 * `wakeline track`; velocities and yaw rate come from a forward-only Kalman
 * filter built from the offline smoother's steps (clean/kin.h wl_kin_*: the same
 * constant-velocity model and noise structure).
 *
 * Pieces, in reading order:
 *   wl_live_filter_*  the causal filter of one robot (filter.c)
 *   wl_latency_*      latency histograms: median and p99 (latency.c)
 *   wl_publisher_*    UDP targets (unicast, multicast) and LCM (publish.c)
 *   wl_live_run       the threads, the slots, the run (run.c)
 *
 * Threads: wl_live_run runs the input on a thread of its own and tracks on
 * the calling thread; callbacks (status, frame_hook, diag) are called from
 * the tracking thread, diag also from the input thread.
 * Ownership: every _create has a _destroy (NULL ok); plain structs are the
 * caller's.  Nothing here prints or exits.
 */
#ifndef WL_LIVE_H
#define WL_LIVE_H

#include <stdint.h>

#include "calib/calib.h"
#include "clean/kin.h"
#include "core/diag.h"
#include "core/err.h"
#include "decode/decode.h"
#include "formats/pose_packet.h"
#include "track/track.h"

/* ---------------------------------------------------------- causal filter */

/* The noise model of the offline smoother (docs/clean.md): per axis a
 * constant-velocity state with continuous white acceleration of density q
 * and white measurement noise sigma.  Offline these are estimated from the
 * whole clip; live they are given (defaults below, or the values that
 * `wakeline clean` reported in a sidecar of the same set-up). */
typedef struct {
	double sigma_pos_m;       /* default 0.002 m (clean's default for short tracks) */
	double q_pos;             /* m^2/s^3, default 0.01 */
	double sigma_heading_rad; /* default 0.035 rad (2 degrees) */
	double q_heading;         /* rad^2/s^3, default 1.0 */
	double gate_prob;         /* chi-square gate on innovations, default 0.999; 0: none */
	double max_gap_s;         /* a robot unseen this long starts afresh (default 0.5 s) */
} wl_live_filter_cfg;

void wl_live_filter_cfg_init(wl_live_filter_cfg *c);
/* Checks ranges; the message names the option. */
wl_status wl_live_filter_cfg_check(const wl_live_filter_cfg *c, wl_err *err);

/* One robot's filter (embedded: _init, nothing to release). */
typedef struct {
	int started;         /* has a state */
	int n_pos;           /* position measurements since the (re)start */
	int h_started;       /* the heading axis has a state */
	int n_head;          /* heading measurements since its start */
	int rejected;        /* gated-out measurements in a row */
	double t_last;       /* time of the state */
	double t_seen;       /* time of the last accepted position */
	wl_kin_step x, y, h; /* state after the last step (xs, Ps) */
} wl_live_filter;

/* The filter's output after a step.  Velocities are NaN until two
 * positions (headings for the yaw rate) have been taken since the start. */
typedef struct {
	double x_m, y_m, heading_rad; /* filtered (heading wrapped); NaN without state */
	double vx_mps, vy_mps, yaw_rate_radps;
	double sd_v_mps; /* standard deviation of each velocity component */
	int accepted;    /* the measurement passed the gate and was used */
} wl_live_state;

void wl_live_filter_init(wl_live_filter *f);
/* Advances to time t (not before the last step) and takes the measurement
 * (x_m, y_m) and heading_rad, each NaN when there is none.  A measurement
 * outside the gate is left out; three in a row restart the filter there.
 * The filter restarts too after max_gap_s without an accepted position. */
void wl_live_filter_step(wl_live_filter *f, const wl_live_filter_cfg *c, double t, double x_m, double y_m,
                         double heading_rad, wl_live_state *out);

/* -------------------------------------------------------------- latencies */

/* A histogram of latencies in bins 1 % wide from 1 microsecond to 100 s:
 * percentiles to within 1 %, memory fixed whatever the run's length. */
#define WL_LATENCY_BINS 1853
typedef struct {
	uint32_t bin[WL_LATENCY_BINS];
	int64_t n;
	double max_s;
} wl_latency;

void wl_latency_reset(wl_latency *h);
void wl_latency_add(wl_latency *h, double seconds);
/* The q-quantile (0..1) in seconds (the bin's geometric middle); NaN when
 * empty. */
double wl_latency_quantile(const wl_latency *h, double q);

/* -------------------------------------------------------------- publisher */

typedef enum { WL_PUB_JSON = 0, WL_PUB_BINARY = 1 } wl_pub_format;

typedef struct wl_publisher wl_publisher;

wl_status wl_publisher_create(wl_publisher **out, wl_err *err);
/* Adds a UDP target: udp://HOST:PORT[?format=json|binary][&ttl=N][&iface=A]
 * (HOST a name, an IPv4 address or an [IPv6] one; unicast, broadcast or
 * multicast; ttl the multicast TTL or hop limit, default 1: the local
 * network; iface the IPv4 address of the interface multicast leaves by).
 * def is the format when the URL gives none.  WL_EINVAL names the URL. */
wl_status wl_publisher_add_udp(wl_publisher *p, const char *url, wl_pub_format def, wl_err *err);
/* Adds LCM: provider as lcm_create takes it (NULL: LCM's default, UDP
 * multicast 239.255.76.67:7667), messages wakeline.pose_t on `channel`.
 * WL_EINVAL when this build has no LCM. */
wl_status wl_publisher_add_lcm(wl_publisher *p, const char *provider, const char *channel, wl_err *err);
int wl_publisher_targets(const wl_publisher *p);
/* Sends one pose to every target, never blocking (a full socket buffer is
 * a failed send).  Returns the number of failed sends. */
int wl_publisher_send(wl_publisher *p, const wl_pose *pose);
/* Sends counted so far, failures, and the first failure's message (empty
 * when none). */
void wl_publisher_counts(const wl_publisher *p, int64_t *sent, int64_t *failed, const char **first_error);
void wl_publisher_destroy(wl_publisher *p);

/* -------------------------------------------------------------------- run */

typedef struct {
	double elapsed_s;         /* since the run started */
	int64_t frames_in;        /* frames decoded and handed to tracking */
	int64_t frames_tracked;   /* frames tracked and published */
	int64_t dropped;          /* frames dropped: tracking behind (never tracked) */
	int64_t skipped;          /* frames skipped by the decoder catching up */
	double input_fps;         /* over the last status period */
	double tracked_fps;       /* likewise */
	double latency_median_ms; /* arrival -> datagrams sent, last status period */
	double latency_p99_ms;
	double input_lag_ms; /* the largest input lag (decode.h wl_frame.lag_s) in the period: time
	                      * frames waited in buffers before they were read, not in latency */
	int robots_listed;   /* robots in the last frame's output */
	int robots_ok;       /* of them found in it */
	int robots_seen;     /* different robots found so far */
	int64_t packets_sent, send_failures;
	int reconnects;
	/* the whole run (filled at the end and in every status) */
	double run_latency_median_ms, run_latency_p99_ms, run_latency_max_ms;
	double run_input_lag_max_ms;
	wl_decode_end end; /* why the input ended */
	char end_what[256];
} wl_live_stats;

typedef struct {
	const char *source;         /* device, URL or file */
	wl_decode_opts input;       /* format, options, threads, realtime, timeout_s, max_lag_s, record_path
	                             * (live, flags, interrupt and diag are set by wl_live_run) */
	const char *raw_path;       /* NULL: no RAW.csv */
	int overwrite;              /* replace an existing RAW.csv or recording */
	const char *const *publish; /* NULL-terminated UDP target URLs (may be NULL) */
	wl_pub_format packet;       /* format of targets whose URL says none */
	int lcm;                    /* publish over LCM too */
	const char *lcm_provider;   /* NULL: LCM's default */
	const char *lcm_channel;    /* NULL: "WAKELINE_POSE" */
	double max_delay_s;         /* a waiting frame older than this is dropped for a newer
	                             * one; <= 0: one frame interval */
	int reconnect;              /* reopen the source after it ends or drops, until stopped */
	double reconnect_wait_s;    /* between attempts (default 1 s) */
	uint32_t session;           /* packet session number; 0: random */
	wl_live_filter_cfg filter;
	/* polled often from both threads: non-zero stops the run (SIGINT) */
	int (*interrupt)(void *ctx);
	void *interrupt_ctx;
	/* every status_period_s (and once at the end), from the tracking thread */
	void (*status)(void *ctx, const wl_live_stats *st);
	void *status_ctx;
	double status_period_s; /* default 1 s */
	/* Called for every frame before it is tracked (may be NULL), from the
	 * tracking thread: the place for a camera watch that re-detects the
	 * floor markers during tracking, as offline tracking will. */
	void (*frame_hook)(void *ctx, const wl_track_image *img);
	void *frame_hook_ctx;
	const wl_diag *diag; /* warnings: skipping, reconnects, send failures, recording */
} wl_live_opts;

/* Fills the defaults (no source, JSON packets, filter defaults). */
void wl_live_opts_init(wl_live_opts *o);

/* Runs until the source ends (or, with reconnect, until interrupted).
 * The end of the stream, a dropped connection and a stop are a normal end
 * (WL_OK; st->end says which); errors are failures to open the source or
 * the outputs, a calibration that does not fit the frames, or a write
 * error.  RAW.csv holds whole lines whatever happens (one write(2) per
 * frame; fsync'ed at the end).  st is filled in both cases. */
wl_status wl_live_run(const wl_live_opts *lo, const wl_track_opts *to, const wl_calib *cal,
                      const char *cal_path, wl_live_stats *st, wl_err *err);

#endif
