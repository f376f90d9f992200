/*
 * worker.c: the two ends of the pipe between a batch worker and the parent
 * (see runner.c).  In the forked child the clip's options are resolved and
 * the clip function runs with a wl_diag whose warnings and progress go to
 * the parent as fixed-size messages (batch_priv.h), and to the clip's
 * process.log; an error ends it with its status and message.  In the parent
 * the messages are decoded: nothing is scraped from text.
 */
#define _GNU_SOURCE
#include "batch/batch.h"

#include <errno.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/prctl.h>
#include <unistd.h>

#include "batch/batch_priv.h"
#include "core/afile.h"
#include "wl_version.h"

_Static_assert(sizeof(batch_msg) <= PIPE_BUF, "a worker message must fit one atomic pipe write");

typedef struct {
	int fd;
	double t_last;
	FILE *log; /* process.log, NULL when it could not be opened */
} worker;

static void send_msg(const worker *w, const batch_msg *m)
{
	if (write(w->fd, m, sizeof *m) < 0) {
		/* the parent is gone; PR_SET_PDEATHSIG ends us */
	}
}

static void text_msg(batch_msg *m, int kind, const char *stage, const char *text)
{
	memset(m, 0, sizeof *m);
	m->kind = (uint32_t)kind;
	snprintf(m->stage, sizeof m->stage, "%s", stage ? stage : "");
	snprintf(m->text, sizeof m->text, "%s", text ? text : "");
	for (char *p = m->text; *p; p++)
		if (*p == '\n')
			*p = ' ';
}

static void w_warn(void *ctx, const char *stage, const char *msg)
{
	worker *w = ctx;
	batch_msg m;
	text_msg(&m, BATCH_MSG_WARN, stage, msg);
	send_msg(w, &m);
	if (w->log)
		fprintf(w->log, "warning: %s: %s\n", stage ? stage : "", msg);
}

static void w_progress(void *ctx, const char *stage, double done, double total, double t_s)
{
	worker *w = ctx;
	batch_msg m;
	double t = batch_now_s();
	(void)t_s;
	if (t - w->t_last < 0.1)
		return;
	w->t_last = t;
	text_msg(&m, BATCH_MSG_PROGRESS, stage, NULL);
	m.done = done;
	m.total = total;
	send_msg(w, &m);
}

void batch_worker_result(const wl_batch_job *job, int64_t frames, size_t runs)
{
	batch_msg m;
	if (!job->diag || job->diag->warn != w_warn)
		return;
	text_msg(&m, BATCH_MSG_RESULT, NULL, NULL);
	m.done = (double)frames;
	m.total = (double)runs;
	send_msg(job->diag->ctx, &m);
	if (((worker *)job->diag->ctx)->log)
		fprintf(((worker *)job->diag->ctx)->log, "done: %lld frames, %zu runs\n", (long long)frames,
		        runs);
}

/* Runs the clip with its options; the log is committed whatever happens.
 * The options are resolved first (a manifest cell's ROBOTS.csv is relative
 * to where the batch was started); then the worker moves into OUT, where
 * every path of the job is relative to, so that what it writes
 * (clean.json, summary.json, messages) names no folder of this node. */
static wl_status run_clip(runner *r, clipjob *j, worker *w, wl_err *err)
{
	wl_diag d = {w_warn, w_progress, w};
	wl_process_opts *opts = malloc(sizeof *opts);
	wl_afile *log = NULL;
	char path[PATH_MAX];
	wl_status st, ls;
	if (!opts)
		return wl_err_set(err, WL_ENOMEM, "%s: out of memory", j->rel);
	st = wl_batch_clip_opts(r->o->proc, j->job.row ? &j->job.row->opts : NULL, opts, err);
	if (!st && opts->decode_threads <= 0)
		opts->decode_threads = j->job.threads;
	if (chdir(r->out_abs) != 0) {
		free(opts);
		return wl_err_set(err, WL_EIO, "cannot enter '%s': %s", r->out_abs, strerror(errno));
	}
	snprintf(path, sizeof path, "%s/%s", j->job.out_dir, BATCH_LOG);
	if ((ls = wl_afile_open(path, &log, st ? NULL : err))) {
		free(opts);
		return st ? st : ls;
	}
	w->log = wl_afile_fp(log);
	fprintf(w->log, "wakeline %s process %s\n", WL_VERSION, j->job.clip_path);
	j->job.opts = opts;
	j->job.diag = &d;
	if (!st)
		st = (r->o->fn ? r->o->fn : batch_pipeline_clip)(&j->job, r->o->fn_ctx, err);
	if (st)
		fprintf(w->log, "error: %s\n", err && err->msg[0] ? err->msg : wl_status_name(st));
	w->log = NULL;
	ls = wl_afile_commit(log, st ? NULL : err);
	free(opts);
	return st ? st : ls;
}

void batch_worker_main(runner *r, clipjob *j, int fd, pid_t parent)
{
	worker w = {fd, 0, NULL};
	wl_err err;
	wl_status s;
	prctl(PR_SET_PDEATHSIG, SIGKILL);
	if (getppid() != parent)
		_exit(3);
	wl_err_clear(&err);
	s = run_clip(r, j, &w, &err);
	if (s != WL_OK) {
		batch_msg m;
		text_msg(&m, BATCH_MSG_ERROR, NULL, err.msg[0] ? err.msg : wl_status_name(s));
		m.status = (int32_t)s;
		send_msg(&w, &m);
	}
	close(fd);
	_exit(s == WL_OK ? 0 : 1);
}

void batch_worker_parse(clipjob *j, runner *r)
{
	batch_msg m;
	size_t used = 0;
	while (j->blen - used >= sizeof m) {
		memcpy(&m, j->buf + used, sizeof m);
		used += sizeof m;
		m.stage[sizeof m.stage - 1] = m.text[sizeof m.text - 1] = '\0';
		switch (m.kind) {
		case BATCH_MSG_PROGRESS:
			j->frames = m.done;
			j->total = m.total;
			break;
		case BATCH_MSG_RESULT:
			j->frames = m.done;
			j->runs = (size_t)m.total;
			break;
		case BATCH_MSG_WARN: {
			char msg[sizeof m.stage + sizeof m.text + 4];
			snprintf(msg, sizeof msg, "%s: %s", m.stage, m.text);
			batch_warn(r, j->rel, msg);
			break;
		}
		case BATCH_MSG_ERROR:
			snprintf(j->msg, sizeof j->msg, "%s", m.text);
			break;
		default:
			break;
		}
	}
	memmove(j->buf, j->buf + used, j->blen - used);
	j->blen -= used;
}
