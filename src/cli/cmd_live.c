/* cmd_live.c: `wakeline live SOURCE --cal CAL.json --publish udp://HOST:PORT`:
 * poses from a camera or a network stream in real time (src/live/live.h;
 * docs/live.md). */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <pthread.h>
#include <signal.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "calib/calib.h"
#include "cli/cli.h"
#include "cli/trackopts.h"
#include "live/live.h"

const char cmd_live_summary[] = "track a camera or network stream live and publish poses (UDP, LCM)";

static const char usage_head[] =
        "usage: wakeline live SOURCE --cal CAL.json --publish udp://HOST:PORT [options]\n"
        "\n"
        "Tracks the robots in a live video source as it arrives and sends each\n"
        "robot's pose as soon as its frame is tracked: one datagram per robot per\n"
        "frame (JSON or a fixed binary layout; LCM too), and records RAW.csv as it\n"
        "goes.  SOURCE is anything FFmpeg opens as a live input: a webcam\n"
        "(/dev/video0), a network stream (rtsp://, udp://, rtp://, srt://,\n"
        "http:// MJPEG, tcp://), or a clip played at its own rate with --realtime.\n"
        "A robot driven from these poses must stop when they stop: see the\n"
        "watchdog in examples/ and the safety notes in docs/live.md.\n"
        "\n"
        "Source:\n"
        "  --cal CAL.json          calibration of this camera setting (required)\n"
        "  --source-format NAME    FFmpeg input format or device (v4l2, mpegts, ...);\n"
        "                          default: guessed (v4l2 for /dev/video*)\n"
        "  --video-size WxH        camera frame size (V4L2 video_size)\n"
        "  --frame-rate FPS        camera frame rate (V4L2 framerate)\n"
        "  --pixel-format NAME     camera pixel format (V4L2 input_format: mjpeg, yuyv422, h264)\n"
        "  --source-option K=V     any FFmpeg option of the source, repeatable\n"
        "                          (e.g. rtsp_transport=tcp, fifo_size=0)\n"
        "  --realtime              read a file no faster than its timestamps (rehearsal)\n"
        "  --timeout-s S           no data for S seconds ends the stream (default 5)\n"
        "  --wait-s S              wait up to S seconds for the stream to start (default 30)\n"
        "  --reconnect             open the source again when it ends or drops, until stopped\n"
        "  --threads N             decoder slice threads (default: all cores)\n"
        "Output:\n"
        "  --publish URL           udp://HOST:PORT[?format=json|binary&ttl=N&iface=ADDR],\n"
        "                          unicast or multicast, repeatable\n"
        "  --packet json|binary    format for targets whose URL gives none (default json)\n"
        "  --lcm                   also publish wakeline.pose_t over LCM (builds with LCM)\n"
        "  --lcm-url URL           LCM provider (default LCM's: udpm://239.255.76.67:7667)\n"
        "  --lcm-channel NAME      LCM channel (default WAKELINE_POSE)\n"
        "  --raw RAW.csv           record the poses as they come (whole lines even if killed)\n"
        "  --record FILE           copy the incoming stream to FILE without re-encoding\n"
        "                          (.ts, .mkv; .mp4 is written fragmented)\n"
        "  --overwrite             replace an existing RAW.csv or recording\n"
        "Latency:\n"
        "  --max-delay-ms MS       drop a waiting frame older than MS when a newer one\n"
        "                          waits (default: one frame interval)\n"
        "  --max-lag-ms MS         when decoding runs MS behind the stream, skip to the\n"
        "                          next key frame (default 500)\n"
        "Causal filter (the offline smoother's model; take the values `wakeline clean`\n"
        "reports for your set-up):\n"
        "  --sigma-pos-m S         position noise, m (default 0.002)\n"
        "  --q-pos Q               process noise, m^2/s^3 (default 0.01)\n"
        "  --sigma-heading-rad S   heading noise, rad (default 0.035)\n"
        "  --q-heading Q           process noise, rad^2/s^3 (default 1)\n"
        "  --gate P                chi-square gate probability (default 0.999; 0: none)\n"
        "  --max-gap-s S           a robot unseen this long starts afresh (default 0.5)\n"
        "Tracking (as in wakeline track):\n";

static const char usage_tail[] =
        "Status:\n"
        "  --status-s S            status line period (default 1 on a terminal, else 10)\n"
        "  -q, --quiet             no status line and no summary\n"
        "  -h, --help              this text\n"
        "\n"
        "Ctrl-C (SIGINT) or SIGTERM ends the run cleanly; RAW.csv always holds whole\n"
        "lines.  Exit status: 0 ok (also when the stream ends or the connection\n"
        "drops), 1 failure, 2 usage error.  See docs/live.md.\n";

enum {
	O_CAL = 256,
	O_SRCFMT,
	O_VSIZE,
	O_FRATE,
	O_PIXFMT,
	O_SRCOPT,
	O_REALTIME,
	O_TIMEOUT,
	O_WAIT,
	O_RECONNECT,
	O_THREADS,
	O_PUBLISH,
	O_PACKET,
	O_LCM,
	O_LCMURL,
	O_LCMCHAN,
	O_RAW,
	O_RECORD,
	O_OVERWRITE,
	O_MAXDELAY,
	O_MAXLAG,
	O_SIGP,
	O_QP,
	O_SIGH,
	O_QH,
	O_GATE,
	O_GAP,
	O_STATUS
};

static const struct option own_opts[] = {{"cal", required_argument, NULL, O_CAL},
                                         {"source-format", required_argument, NULL, O_SRCFMT},
                                         {"video-size", required_argument, NULL, O_VSIZE},
                                         {"frame-rate", required_argument, NULL, O_FRATE},
                                         {"pixel-format", required_argument, NULL, O_PIXFMT},
                                         {"source-option", required_argument, NULL, O_SRCOPT},
                                         {"realtime", no_argument, NULL, O_REALTIME},
                                         {"timeout-s", required_argument, NULL, O_TIMEOUT},
                                         {"wait-s", required_argument, NULL, O_WAIT},
                                         {"reconnect", no_argument, NULL, O_RECONNECT},
                                         {"threads", required_argument, NULL, O_THREADS},
                                         {"publish", required_argument, NULL, O_PUBLISH},
                                         {"packet", required_argument, NULL, O_PACKET},
                                         {"lcm", no_argument, NULL, O_LCM},
                                         {"lcm-url", required_argument, NULL, O_LCMURL},
                                         {"lcm-channel", required_argument, NULL, O_LCMCHAN},
                                         {"raw", required_argument, NULL, O_RAW},
                                         {"record", required_argument, NULL, O_RECORD},
                                         {"overwrite", no_argument, NULL, O_OVERWRITE},
                                         {"max-delay-ms", required_argument, NULL, O_MAXDELAY},
                                         {"max-lag-ms", required_argument, NULL, O_MAXLAG},
                                         {"sigma-pos-m", required_argument, NULL, O_SIGP},
                                         {"q-pos", required_argument, NULL, O_QP},
                                         {"sigma-heading-rad", required_argument, NULL, O_SIGH},
                                         {"q-heading", required_argument, NULL, O_QH},
                                         {"gate", required_argument, NULL, O_GATE},
                                         {"max-gap-s", required_argument, NULL, O_GAP},
                                         {"status-s", required_argument, NULL, O_STATUS},
                                         {"quiet", no_argument, NULL, 'q'},
                                         {"help", no_argument, NULL, 'h'},
                                         {NULL, 0, NULL, 0}};

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
	wl_track_opts to;
	cli_track_extra tx;
	const char *cal_path;
	const char *publish[MAX_PUBLISH + 1];
	int npublish;
	const char *srcopt[2 * MAX_SRCOPT + 1];
	char srcopt_buf[MAX_SRCOPT][256];
	int nsrcopt;
	int quiet;
	double status_s;
} live_args;

static int add_source_option(live_args *a, const char *key, const char *val)
{
	char *b;
	if (a->nsrcopt >= MAX_SRCOPT)
		return cli_usage_error("live", "at most %d source options", MAX_SRCOPT);
	b = a->srcopt_buf[a->nsrcopt];
	if (snprintf(b, sizeof a->srcopt_buf[0], "%s", key) >= (int)sizeof a->srcopt_buf[0])
		return cli_usage_error("live", "source option '%s' is too long", key);
	a->srcopt[2 * a->nsrcopt] = b;
	a->srcopt[2 * a->nsrcopt + 1] = val;
	a->nsrcopt++;
	a->srcopt[2 * a->nsrcopt] = NULL;
	return 0;
}

static int source_option(live_args *a, const char *kv)
{
	const char *eq = strchr(kv, '=');
	char key[256];
	if (!eq || eq == kv || (size_t)(eq - kv) >= sizeof key)
		return cli_usage_error("live", "--source-option '%s': give KEY=VALUE", kv);
	memcpy(key, kv, (size_t)(eq - kv));
	key[eq - kv] = '\0';
	return add_source_option(a, key, eq + 1);
}

static int ms_opt(const char *name, const char *arg, double lo, double hi, double *out_s)
{
	double v;
	if (!cli_parse_double(arg, &v) || v < lo || v > hi)
		return cli_usage_error("live", "%s '%s': give a number from %g to %g", name, arg, lo, hi);
	*out_s = v / 1000.0;
	return 0;
}

static int num_opt(const char *name, const char *arg, double lo, double hi, double *out)
{
	if (!cli_parse_double(arg, out) || *out < lo || *out > hi)
		return cli_usage_error("live", "%s '%s': give a number from %g to %g", name, arg, lo, hi);
	return 0;
}

static int own_option(live_args *a, int c, const char *arg)
{
	wl_live_opts *lo = &a->lo;
	switch (c) {
	case O_CAL:
		a->cal_path = arg;
		return 0;
	case O_SRCFMT:
		lo->input.format = arg;
		return 0;
	case O_VSIZE:
		return add_source_option(a, "video_size", arg);
	case O_FRATE:
		return add_source_option(a, "framerate", arg);
	case O_PIXFMT:
		return add_source_option(a, "input_format", arg);
	case O_SRCOPT:
		return source_option(a, arg);
	case O_REALTIME:
		lo->input.realtime = 1;
		return 0;
	case O_TIMEOUT:
		return num_opt("--timeout-s", arg, 0.1, 86400, &lo->input.timeout_s);
	case O_WAIT:
		return num_opt("--wait-s", arg, 0.1, 86400, &lo->input.open_timeout_s);
	case O_RECONNECT:
		lo->reconnect = 1;
		return 0;
	case O_THREADS:
		if (!cli_parse_int(arg, &lo->input.threads) || lo->input.threads < 0 ||
		    lo->input.threads > 64)
			return cli_usage_error("live", "--threads '%s': give 0 (all cores) to 64", arg);
		return 0;
	case O_PUBLISH:
		if (a->npublish >= MAX_PUBLISH)
			return cli_usage_error("live", "at most %d --publish targets", MAX_PUBLISH);
		a->publish[a->npublish++] = arg;
		return 0;
	case O_PACKET:
		if (strcmp(arg, "json") == 0)
			lo->packet = WL_PUB_JSON;
		else if (strcmp(arg, "binary") == 0)
			lo->packet = WL_PUB_BINARY;
		else
			return cli_usage_error("live", "--packet '%s': give json or binary", arg);
		return 0;
	case O_LCM:
		lo->lcm = 1;
		return 0;
	case O_LCMURL:
		lo->lcm = 1;
		lo->lcm_provider = arg;
		return 0;
	case O_LCMCHAN:
		lo->lcm_channel = arg;
		return 0;
	case O_RAW:
		lo->raw_path = arg;
		return 0;
	case O_RECORD:
		lo->input.record_path = arg;
		return 0;
	case O_OVERWRITE:
		lo->overwrite = 1;
		return 0;
	case O_MAXDELAY:
		return ms_opt("--max-delay-ms", arg, 0, 60000, &lo->max_delay_s);
	case O_MAXLAG:
		return ms_opt("--max-lag-ms", arg, 0, 600000, &lo->input.max_lag_s);
	case O_SIGP:
		return num_opt("--sigma-pos-m", arg, 1e-9, 10, &lo->filter.sigma_pos_m);
	case O_QP:
		return num_opt("--q-pos", arg, 1e-12, 1e6, &lo->filter.q_pos);
	case O_SIGH:
		return num_opt("--sigma-heading-rad", arg, 1e-9, 4, &lo->filter.sigma_heading_rad);
	case O_QH:
		return num_opt("--q-heading", arg, 1e-12, 1e8, &lo->filter.q_heading);
	case O_GATE:
		return num_opt("--gate", arg, 0, 0.999999, &lo->filter.gate_prob);
	case O_GAP:
		return num_opt("--max-gap-s", arg, 1e-3, 3600, &lo->filter.max_gap_s);
	case O_STATUS:
		return num_opt("--status-s", arg, 0.1, 3600, &a->status_s);
	case 'q':
		a->quiet = 1;
		return 0;
	default:
		return cli_usage_error("live", "unknown option");
	}
}

static int parse(int argc, char **argv, live_args *a)
{
	struct option all[sizeof own_opts / sizeof own_opts[0] + 32];
	int c, rc;
	cli_track_merge(own_opts, all);
	optind = 1;
	while ((c = getopt_long(argc, argv, "qh", all, NULL)) != -1) {
		if (c == 'h') {
			fputs(usage_head, stdout);
			fputs(cli_track_usage, stdout);
			fputs(usage_tail, stdout);
			return -1;
		}
		if (c == '?')
			return cli_usage_error("live", "unknown option");
		rc = c >= CLI_TRACK_OPT_BASE ? cli_track_option("live", c, optarg, &a->to, &a->tx)
		                             : own_option(a, c, optarg);
		if (rc)
			return rc;
	}
	if (optind != argc - 1)
		return cli_usage_error("live", optind >= argc ? "give the SOURCE (a device, URL or file)"
		                                              : "give one SOURCE");
	if (!a->cal_path)
		return cli_usage_error("live", "give the calibration: --cal CAL.json");
	if (a->npublish == 0 && !a->lo.lcm && !a->lo.raw_path)
		return cli_usage_error(
		        "live", "nothing to do: give --publish udp://HOST:PORT, --lcm or --raw RAW.csv");
	if (a->lo.lcm && !wl_pose_lcm_available())
		return cli_usage_error(
		        "live", "this build has no LCM: install liblcm-dev and rebuild, or use --publish");
	a->lo.source = argv[optind];
	a->publish[a->npublish] = NULL;
	a->lo.publish = a->publish;
	a->lo.input.options = a->nsrcopt ? a->srcopt : NULL;
	return cli_track_finish("live", &a->to, &a->tx);
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
	live_args a;
	wl_calib cal;
	wl_live_stats st;
	wl_err err;
	wl_diag diag;
	out_ctx oc;
	int rc;
	memset(&a, 0, sizeof a);
	wl_live_opts_init(&a.lo);
	wl_track_opts_init(&a.to);
	a.status_s = -1;
	if ((rc = parse(argc, argv, &a)) != 0)
		return rc < 0 ? WL_EXIT_OK : rc;
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
	rc = wl_live_run(&a.lo, &a.to, &cal, a.cal_path, &st, &err);
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
