/*
 * worker.c: the two ends of the pipe between a batch worker and the parent
 * (see runner.c): in the forked child, the clip function runs with a
 * progress hook that writes "P <done> <total>" lines and ends with an
 * "E <message>" line on failure; in the parent, those lines are decoded.
 */
#define _GNU_SOURCE
#include "batch/batch.h"

#include <signal.h>
#include <stdio.h>
#include <string.h>
#include <sys/prctl.h>
#include <unistd.h>

#include "batch/batch_priv.h"

typedef struct {
	int fd;
	double t_last;
} child_ctx;

static void child_progress(void *pctx, long done, long total)
{
	child_ctx *c = pctx;
	char b[64];
	int n;
	double t = batch_now_s();
	if (t - c->t_last < 0.1)
		return;
	c->t_last = t;
	n = snprintf(b, sizeof b, "P %ld %ld\n", done, total);
	if (write(c->fd, b, (size_t)n) < 0) {
		/* the parent is gone; PR_SET_PDEATHSIG ends us */
	}
}

void batch_worker_main(runner *r, clipjob *j, int fd, pid_t parent)
{
	child_ctx c = {fd, 0};
	wl_err err;
	wl_status s;
	char line[600];
	int n;
	size_t i;
	prctl(PR_SET_PDEATHSIG, SIGKILL);
	if (getppid() != parent)
		_exit(3);
	wl_err_clear(&err);
	j->job.progress = child_progress;
	j->job.progress_ctx = &c;
	s = r->o->fn(&j->job, r->o->fn_ctx, &err);
	if (s != WL_OK) {
		for (i = 0; err.msg[i]; i++)
			if (err.msg[i] == '\n')
				err.msg[i] = ' ';
		n = snprintf(line, sizeof line, "E %s\n", err.msg[0] ? err.msg : wl_status_name(s));
		if (write(fd, line, (size_t)(n < (int)sizeof line ? n : (int)sizeof line - 1)) < 0)
			_exit(1);
	}
	close(fd);
	_exit(s == WL_OK ? 0 : 1);
}

void batch_worker_parse(clipjob *j)
{
	char *nl;
	while ((nl = memchr(j->buf, '\n', j->blen))) {
		size_t len = (size_t)(nl - j->buf);
		*nl = '\0';
		if (j->buf[0] == 'P') {
			long a = 0, b = -1;
			if (sscanf(j->buf, "P %ld %ld", &a, &b) == 2) {
				j->frames = a;
				j->total = b;
			}
		} else if (j->buf[0] == 'E' && len > 2) {
			snprintf(j->msg, sizeof j->msg, "%s", j->buf + 2);
		}
		memmove(j->buf, nl + 1, j->blen - len - 1);
		j->blen -= len + 1;
	}
	if (j->blen == sizeof j->buf) /* a line too long: drop it */
		j->blen = 0;
}
