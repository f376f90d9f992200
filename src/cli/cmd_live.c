/* cmd_live.c: `wakeline live SOURCE --cal CAL.json --publish udp://HOST:PORT`:
 * poses from a camera or a network stream in real time (src/live/live.h;
 * docs/live.md). */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <pthread.h>
#include <signal.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "calib/calib.h"
#include "cli/cli.h"
#include "cli/stageopts.h"
#include "live/live.h"

const char cmd_live_summary[] = "track a camera or network stream live and publish poses (UDP, LCM)";

static const char HEAD[] = "usage: wakeline live SOURCE --cal CAL.json --publish udp://HOST:PORT [options]\n"
                           "\n"
                           "Tracks the robots in a live video source as it arrives and sends each\n"
                           "robot's pose as soon as its frame is tracked: one datagram per robot per\n"
                           "frame (JSON or a fixed binary layout; LCM too), and records RAW.csv as it\n"
                           "goes.  SOURCE is anything FFmpeg opens as a live input: a webcam\n"
                           "(/dev/video0), a network stream (rtsp://, udp://, rtp://, srt://,\n"
                           "http:// MJPEG, tcp://), or a clip played at its own rate with --realtime.\n"
                           "A robot driven from these poses must stop when they stop: see the\n"
                           "watchdog in examples/ and the safety notes in docs/live.md.\n"
                           "\n";

static const char TAIL[] = "\n"
                           "Ctrl-C (SIGINT) or SIGTERM ends the run cleanly; RAW.csv always holds whole\n"
                           "lines.  Exit status: 0 ok (also when the stream ends or the connection\n"
                           "drops), 1 failure, 2 usage error.  See docs/live.md.\n";

#define MAX_PUBLISH 16
#define MAX_SRCOPT 32

/* ---- signals: the handler only sets a flag that the library polls ---- */

static volatile sig_atomic_t stop_requested;

static void on_signal(int sig)
{
	(void)sig;
	stop_requested = 1;
}

static int should_stop(void *ctx)
{
	(void)ctx;
	return stop_requested != 0;
}

static void catch_signals(void)
{
	struct sigaction sa;
	memset(&sa, 0, sizeof sa);
	sa.sa_handler = on_signal;
	sa.sa_flags = SA_RESETHAND; /* a second Ctrl-C ends the program at once */
	sigemptyset(&sa.sa_mask);
	sigaction(SIGINT, &sa, NULL);
	sigaction(SIGTERM, &sa, NULL);
}

/* ---- status line and warnings (two threads write to stderr) ---- */

typedef struct {
	pthread_mutex_t m;
	int quiet, tty, line_open;
} out_ctx;

static void clear_line(out_ctx *c)
{
	if (c->line_open) {
		fputs("\r\033[K", stderr);
		c->line_open = 0;
	}
}

static void on_warn(void *ctx, const char *stage, const char *msg)
{
	out_ctx *c = ctx;
	(void)stage;
	pthread_mutex_lock(&c->m);
	clear_line(c);
	fprintf(stderr, "wakeline live: warning: %s\n", msg);
	pthread_mutex_unlock(&c->m);
}

static void fmt_ms(char *buf, size_t n, double ms)
{
	if (isfinite(ms))
		snprintf(buf, n, "%.1f", ms);
	else
		snprintf(buf, n, "-");
}

static void on_status(void *ctx, const wl_live_stats *st)
{
	out_ctx *c = ctx;
	char med[32], p99[32];
	if (c->quiet)
		return;
	fmt_ms(med, sizeof med, st->latency_median_ms);
	fmt_ms(p99, sizeof p99, st->latency_p99_ms);
	pthread_mutex_lock(&c->m);
	clear_line(c);
	fprintf(stderr,
	        "live: in %.1f fps, tracked %.1f fps, latency %s ms median, %s ms p99, input lag %.0f ms, "
	        "%lld dropped, %lld skipped, robots %d/%d seen now (%d ever)",
	        st->input_fps, st->tracked_fps, med, p99, st->input_lag_ms, (long long)st->dropped,
	        (long long)st->skipped, st->robots_ok, st->robots_listed, st->robots_seen);
	if (c->tty) {
		c->line_open = 1;
	} else {
		fputc('\n', stderr);
	}
	fflush(stderr);
	pthread_mutex_unlock(&c->m);
}

/* ---- options ---- */

typedef struct {
	wl_live_opts lo;
	cli_stages st; /* the tracker's options, as in track (its tables point into it) */
	const char *publish[MAX_PUBLISH + 1];
	int npublish;
	const char *srcopt[2 * MAX_SRCOPT + 1];
	char srcopt_buf[MAX_SRCOPT][256];
	int nsrcopt;
	int quiet;
	double status_s, max_delay_ms, max_lag_ms;
	const char *cal_path;
} live_args;

static int add_source_option(live_args *a, const char *key, const char *val, char *msg, size_t cap)
{
	char *b;
	if (a->nsrcopt >= MAX_SRCOPT)
		return snprintf(msg, cap, "at most %d source options", MAX_SRCOPT), 1;
	b = a->srcopt_buf[a->nsrcopt];
	if (snprintf(b, sizeof a->srcopt_buf[0], "%s", key) >= (int)sizeof a->srcopt_buf[0])
		return snprintf(msg, cap, "the option's name is too long"), 1;
	a->srcopt[2 * a->nsrcopt] = b;
	a->srcopt[2 * a->nsrcopt + 1] = val;
	a->nsrcopt++;
	a->srcopt[2 * a->nsrcopt] = NULL;
	return 0;
}

static int opt_source(const char *kv, void *dest, char *msg, size_t cap)
{
	const char *eq = strchr(kv, '=');
	char key[256];
	if (!eq || eq == kv || (size_t)(eq - kv) >= sizeof key)
		return snprintf(msg, cap, "give KEY=VALUE"), 1;
	memcpy(key, kv, (size_t)(eq - kv));
	key[eq - kv] = '\0';
	return add_source_option(dest, key, eq + 1, msg, cap);
}

static int opt_vsize(const char *arg, void *dest, char *msg, size_t cap)
{
	return add_source_option(dest, "video_size", arg, msg, cap);
}

static int opt_frate(const char *arg, void *dest, char *msg, size_t cap)
{
	return add_source_option(dest, "framerate", arg, msg, cap);
}

static int opt_pixfmt(const char *arg, void *dest, char *msg, size_t cap)
{
	return add_source_option(dest, "input_format", arg, msg, cap);
}

static int opt_publish(const char *arg, void *dest, char *msg, size_t cap)
{
	live_args *a = dest;
	if (a->npublish >= MAX_PUBLISH)
		return snprintf(msg, cap, "at most %d --publish targets", MAX_PUBLISH), 1;
	a->publish[a->npublish++] = arg;
	return 0;
}

static int opt_packet(const char *arg, void *dest, char *msg, size_t cap)
{
	wl_live_opts *lo = dest;
	if (strcmp(arg, "json") == 0)
		lo->packet = WL_PUB_JSON;
	else if (strcmp(arg, "binary") == 0)
		lo->packet = WL_PUB_BINARY;
	else
		return snprintf(msg, cap, "give json or binary"), 1;
	return 0;
}

static int opt_lcm_url(const char *arg, void *dest, char *msg, size_t cap)
{
	wl_live_opts *lo = dest;
	(void)msg;
	(void)cap;
	lo->lcm = 1;
	lo->lcm_provider = arg;
	return 0;
}

static int parse(int argc, char **argv, live_args *a)
{
	wl_live_opts *lo = &a->lo;
	int rc, first;
	const cli_opt own[] = {
	        CLI_OPT_SECTION("Source:"),
	        CLI_OPT_STR("cal", 0, "CAL.json", "calibration of this camera setting (required)",
	                    &a->cal_path),
	        CLI_OPT_STR("source-format", 0, "NAME",
	                    "FFmpeg input format or device (v4l2, mpegts, ...);\ndefault: guessed (v4l2 for "
	                    "/dev/video*)",
	                    &lo->input.format),
	        CLI_OPT_FN("video-size", "WxH", "camera frame size (V4L2 video_size)", a, opt_vsize),
	        CLI_OPT_FN("frame-rate", "FPS", "camera frame rate (V4L2 framerate)", a, opt_frate),
	        CLI_OPT_FN("pixel-format", "NAME",
	                   "camera pixel format (V4L2 input_format: mjpeg, yuyv422, h264)", a, opt_pixfmt),
	        CLI_OPT_FN(
	                "source-option", "K=V",
	                "any FFmpeg option of the source, repeatable\n(e.g. rtsp_transport=tcp, fifo_size=0)",
	                a, opt_source),
	        CLI_OPT_FLAG("realtime", 0, "read a file no faster than its timestamps (rehearsal)",
	                     &lo->input.realtime),
	        CLI_OPT_NUM("timeout-s", "S", "no data for S seconds ends the stream (default 5)",
	                    &lo->input.timeout_s, 0.1, 86400),
	        CLI_OPT_NUM("wait-s", "S", "wait up to S seconds for the stream to start (default 30)",
	                    &lo->input.open_timeout_s, 0.1, 86400),
	        CLI_OPT_FLAG("reconnect", 0, "open the source again when it ends or drops, until stopped",
	                     &lo->reconnect),
	        CLI_OPT_SECTION("Output:"),
	        CLI_OPT_FN("publish", "URL",
	                   "udp://HOST:PORT[?format=json|binary&ttl=N&iface=ADDR],\nunicast or multicast, "
	                   "repeatable",
	                   a, opt_publish),
	        CLI_OPT_FN("packet", "json|binary", "format for targets whose URL gives none (default json)",
	                   lo, opt_packet),
	        CLI_OPT_FLAG("lcm", 0, "also publish wakeline.pose_t over LCM (builds with LCM)", &lo->lcm),
	        CLI_OPT_FN("lcm-url", "URL", "LCM provider (default LCM's: udpm://239.255.76.67:7667)", lo,
	                   opt_lcm_url),
	        CLI_OPT_STR("lcm-channel", 0, "NAME", "LCM channel (default WAKELINE_POSE)",
	                    &lo->lcm_channel),
	        CLI_OPT_STR("raw", 0, "RAW.csv", "record the poses as they come (whole lines even if killed)",
	                    &lo->raw_path),
	        CLI_OPT_STR(
	                "record", 0, "FILE",
	                "copy the incoming stream to FILE without re-encoding\n(.ts, .mkv; .mp4 is written "
	                "fragmented)",
	                &lo->input.record_path),
	        CLI_OPT_FLAG("overwrite", 0, "replace an existing RAW.csv or recording", &lo->overwrite),
	        CLI_OPT_SECTION("Latency:"),
	        CLI_OPT_NUM("max-delay-ms", "MS",
	                    "drop a waiting frame older than MS when a newer one\nwaits (default: one frame "
	                    "interval)",
	                    &a->max_delay_ms, 0, 60000),
	        CLI_OPT_NUM(
	                "max-lag-ms", "MS",
	                "when decoding runs MS behind the stream, skip to the\nnext key frame (default 500)",
	                &a->max_lag_ms, 0, 600000),
	        CLI_OPT_SECTION("Causal filter (the offline smoother's model; take the values\n"
	                        "`wakeline clean` reports for your set-up):"),
	        CLI_OPT_NUM("sigma-pos-m", "S", "position noise, m (default 0.002)", &lo->filter.sigma_pos_m,
	                    1e-9, 10),
	        CLI_OPT_NUM("q-pos", "Q", "process noise, m^2/s^3 (default 0.01)", &lo->filter.q_pos, 1e-12,
	                    1e6),
	        CLI_OPT_NUM("sigma-heading-rad", "S", "heading noise, rad (default 0.035)",
	                    &lo->filter.sigma_heading_rad, 1e-9, 4),
	        CLI_OPT_NUM("q-heading", "Q", "process noise, rad^2/s^3 (default 1)", &lo->filter.q_heading,
	                    1e-12, 1e8),
	        CLI_OPT_NUM("gate", "P", "chi-square gate probability (default 0.999; 0: none)",
	                    &lo->filter.gate_prob, 0, 0.999999),
	        CLI_OPT_NUM("max-gap-s", "S", "a robot unseen this long starts afresh (default 0.5)",
	                    &lo->filter.max_gap_s, 1e-3, 3600),
	        CLI_OPT_SECTION("Status:"),
	        CLI_OPT_NUM("status-s", "S", "status line period (default 1 on a terminal, else 10)",
	                    &a->status_s, 0.1, 3600),
	        CLI_OPT_FLAG("quiet", 'q', "no status line and no summary", &a->quiet),
	        CLI_OPT_END};
	const cli_opt *tables[] = {own, a->st.track, NULL};
	a->max_delay_ms = a->max_lag_ms = NAN;
	for (cli_opt *t = a->st.track; t->kind != CLI_END; t++)
		if (t->kind != CLI_SECTION && strcmp(t->name, "threads") == 0)
			t->help = "decoder slice threads (default: all cores)";
	if ((rc = cli_parse("live", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (first != argc - 1)
		return cli_usage_error("live", first >= argc ? "give the SOURCE (a device, URL or file)"
		                                             : "give one SOURCE");
	if (!a->cal_path)
		return cli_usage_error("live", "give the calibration: --cal CAL.json");
	if (a->npublish == 0 && !lo->lcm && !lo->raw_path)
		return cli_usage_error(
		        "live", "nothing to do: give --publish udp://HOST:PORT, --lcm or --raw RAW.csv");
	if (lo->lcm && !wl_pose_lcm_available())
		return cli_usage_error(
		        "live", "this build has no LCM: install liblcm-dev and rebuild, or use --publish");
	if (!isnan(a->max_delay_ms))
		lo->max_delay_s = a->max_delay_ms / 1000.0;
	if (!isnan(a->max_lag_ms))
		lo->input.max_lag_s = a->max_lag_ms / 1000.0;
	lo->input.threads = a->st.p.decode_threads;
	lo->source = argv[first];
	a->publish[a->npublish] = NULL;
	lo->publish = a->publish;
	lo->input.options = a->nsrcopt ? a->srcopt : NULL;
	return cli_stages_finish("live", &a->st);
}

static const char *end_text(wl_decode_end e)
{
	switch (e) {
	case WL_END_EOF:
		return "the stream ended";
	case WL_END_TIMEOUT:
		return "the stream stopped";
	case WL_END_ERROR:
		return "the connection dropped";
	case WL_END_STOPPED:
		return "stopped";
	default:
		return "ended";
	}
}

static void summary(const live_args *a, const wl_live_stats *st)
{
	char med[32], p99[32], mx[32];
	fmt_ms(med, sizeof med, st->run_latency_median_ms);
	fmt_ms(p99, sizeof p99, st->run_latency_p99_ms);
	fmt_ms(mx, sizeof mx, st->run_latency_max_ms);
	printf("live: %lld frames in, %lld tracked, %lld dropped, %lld skipped; latency median %s ms, p99 %s "
	       "ms, max %s ms; input lag max %.0f ms; %lld packets sent, %lld failed; %d robots seen; %d "
	       "reconnects\n",
	       (long long)st->frames_in, (long long)st->frames_tracked, (long long)st->dropped,
	       (long long)st->skipped, med, p99, mx, st->run_input_lag_max_ms, (long long)st->packets_sent,
	       (long long)st->send_failures, st->robots_seen, st->reconnects);
	if (a->lo.raw_path)
		printf("%s: %lld frames recorded\n", a->lo.raw_path, (long long)st->frames_tracked);
}

int cmd_live(int argc, char **argv)
{
	static live_args a; /* large; the option tables point into it */
	wl_calib cal;
	wl_live_stats st;
	wl_err err;
	wl_diag diag;
	out_ctx oc;
	int rc;
	memset(&a, 0, sizeof a);
	wl_live_opts_init(&a.lo);
	cli_stages_init(&a.st);
	a.status_s = -1;
	if ((rc = parse(argc, argv, &a)) != CLI_CONTINUE)
		return rc;
	wl_calib_init(&cal);
	wl_err_clear(&err);
	if (wl_calib_load(a.cal_path, &cal, &err) != WL_OK) {
		wl_calib_release(&cal);
		return cli_fail("live", &err);
	}
	memset(&oc, 0, sizeof oc);
	pthread_mutex_init(&oc.m, NULL);
	oc.quiet = a.quiet;
	oc.tty = isatty(STDERR_FILENO);
	diag.warn = on_warn;
	diag.progress = NULL;
	diag.ctx = &oc;
	a.lo.diag = &diag;
	a.lo.status = on_status;
	a.lo.status_ctx = &oc;
	a.lo.status_period_s = a.status_s > 0 ? a.status_s : oc.tty ? 1.0 : 10.0;
	a.lo.interrupt = should_stop;
	catch_signals();
	rc = wl_live_run(&a.lo, &a.st.p.track, &cal, a.cal_path, &st, &err);
	pthread_mutex_lock(&oc.m);
	clear_line(&oc);
	pthread_mutex_unlock(&oc.m);
	wl_calib_release(&cal);
	pthread_mutex_destroy(&oc.m);
	if (rc != WL_OK)
		return cli_fail("live", &err);
	if (!a.quiet) {
		int why = st.end != WL_END_STOPPED && st.end_what[0];
		fprintf(stderr, "wakeline live: %s%s%s\n", end_text(st.end), why ? ": " : "",
		        why ? st.end_what : "");
		summary(&a, &st);
	}
	return cli_finish("live", WL_EXIT_OK);
}
