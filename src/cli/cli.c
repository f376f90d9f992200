/* cli.c: helpers shared by the command files (see cli.h). */
#define _POSIX_C_SOURCE 200809L
#include "cli/cli.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "core/csvio.h"

int cli_fail(const char *cmd, const wl_err *err)
{
	fprintf(stderr, "wakeline %s: error: %s\n", cmd, err && err->msg[0] ? err->msg : "failed");
	return WL_EXIT_FAIL;
}

int cli_usage_error(const char *cmd, const char *fmt, ...)
{
	va_list ap;
	fprintf(stderr, "wakeline %s: ", cmd);
	va_start(ap, fmt);
	vfprintf(stderr, fmt, ap);
	va_end(ap);
	fprintf(stderr, "\nrun 'wakeline %s --help' for the options\n", cmd);
	return WL_EXIT_USAGE;
}

void cli_warn(const char *cmd, const char *fmt, ...)
{
	va_list ap;
	fprintf(stderr, "wakeline %s: warning: ", cmd);
	va_start(ap, fmt);
	vfprintf(stderr, fmt, ap);
	va_end(ap);
	fputc('\n', stderr);
}

int cli_finish(const char *cmd, int status)
{
	if (fflush(stdout) != 0 || ferror(stdout)) {
		fprintf(stderr, "wakeline %s: error: cannot write standard output: %s\n", cmd,
		        strerror(errno));
		return WL_EXIT_FAIL;
	}
	return status;
}

int cli_parse_double(const char *s, double *out)
{
	return wl_parse_double(s, out);
}

int cli_parse_int(const char *s, int *out)
{
	long v;
	if (!wl_parse_long(s, &v) || v < -2147483647L || v > 2147483647L)
		return 0;
	*out = (int)v;
	return 1;
}

double cli_now_s(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

void cli_progress_init(cli_progress *p, int quiet)
{
	p->enabled = !quiet && isatty(STDERR_FILENO);
	p->t_start = cli_now_s();
	p->t_last = 0;
}

void cli_progress_update(cli_progress *p, const char *fmt, ...)
{
	va_list ap;
	double now;
	if (!p->enabled)
		return;
	now = cli_now_s();
	if (now - p->t_last < 0.2)
		return;
	p->t_last = now;
	fputs("\r\033[K", stderr);
	va_start(ap, fmt);
	vfprintf(stderr, fmt, ap);
	va_end(ap);
	fflush(stderr);
}

void cli_progress_done(cli_progress *p)
{
	if (p->enabled && p->t_last > 0)
		fputs("\r\033[K", stderr);
}

static void diag_warn(void *ctx, const char *stage, const char *msg)
{
	cli_diag *cd = ctx;
	cli_progress_done(&cd->prog);
	cd->prog.t_last = 0;
	if (stage && strcmp(stage, cd->cmd) != 0)
		cli_warn(cd->cmd, "%s: %s", stage, msg);
	else
		cli_warn(cd->cmd, "%s", msg);
}

static void diag_progress(void *ctx, const char *stage, double done, double total, double t_s)
{
	cli_diag *cd = ctx;
	int frames = stage && strcmp(stage, "track") == 0;
	double el = cli_now_s() - cd->prog.t_start, rate = el > 0 ? done / el : 0;
	(void)t_s;
	if (total > 0 && rate > 0)
		cli_progress_update(&cd->prog, "%s: %.0f of %.0f%s, %.0f%s, %.0f s left", stage, done, total,
		                    frames ? " frames" : "", rate, frames ? " fps" : "/s",
		                    (total - done) / rate);
	else
		cli_progress_update(&cd->prog, "%s: %.0f%s, %.0f%s", stage, done, frames ? " frames" : "",
		                    rate, frames ? " fps" : "/s");
}

const wl_diag *cli_diag_init(cli_diag *cd, const char *cmd, int quiet)
{
	memset(cd, 0, sizeof *cd);
	cd->cmd = cmd;
	cd->d.warn = diag_warn;
	cd->d.progress = diag_progress;
	cd->d.ctx = cd;
	cli_progress_init(&cd->prog, quiet);
	return &cd->d;
}

void cli_diag_done(cli_diag *cd)
{
	cli_progress_done(&cd->prog);
}
