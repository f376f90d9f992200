/*
 * runner.c: the resumable job runner (see batch.h); the resume rule and the
 * journal are in resume.c, the worker end of the pipe in worker.c.
 *
 * Each clip runs in its own fork()ed worker, so a crash, a leak or a stuck
 * decoder stays in that clip and memory stays flat however many clips there
 * are.  A worker reports frames and its error message over a pipe; the
 * parent alone writes clip.json (the done marker, last, atomically) and the
 * journal (append-only, one write() per line), so killing the batch at any
 * moment leaves complete files only.  Workers ask the kernel to kill them
 * when the parent dies (PR_SET_PDEATHSIG), so a rerun never races an orphan.
 */
#define _GNU_SOURCE
#include "batch/batch.h"

#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <math.h>
#include <poll.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "batch/batch_priv.h"
#include "core/afile.h"
#include "core/csvio.h"
#include "core/jsonio.h"

static void emit(runner *r, wl_batch_ev_kind kind, const char *clip, const char *msg)
{
	wl_batch_event ev;
	double el, units = 0, rate;
	size_t i;
	long frames = r->frames_done;
	if (!r->o->on_event)
		return;
	el = batch_now_s() - r->t_start;
	for (i = 0; i < r->njobs; i++) {
		if (r->jobs[i].pid > 0) {
			frames += r->jobs[i].frames;
			if (r->jobs[i].total > 0)
				units += fmin(1.0, (double)r->jobs[i].frames / (double)r->jobs[i].total);
		}
	}
	units += (double)(r->res->done + r->res->failed);
	memset(&ev, 0, sizeof ev);
	ev.kind = kind;
	ev.clip = clip;
	ev.msg = msg;
	ev.finished = r->finished;
	ev.total = r->njobs;
	ev.failed = r->res->failed;
	ev.running = r->running;
	ev.fps = el > 0 ? (double)frames / el : 0;
	rate = el > 0.5 ? units / el : 0;
	ev.eta_s = rate > 0 ? ((double)(r->njobs - r->finished) -
	                       (units - (double)(r->res->done + r->res->failed))) /
	                              rate
	                    : NAN;
	if (ev.eta_s < 0)
		ev.eta_s = 0;
	r->o->on_event(&ev, r->o->ev_ctx);
}

static wl_status start_job(runner *r, clipjob *j, wl_err *err)
{
	int p[2];
	pid_t pid, parent = getpid();
	size_t i;
	batch_remove_stale_tmp(j->out_dir);
	/* the old done marker goes first: from here the folder is not complete */
	{
		char path[PATH_MAX];
		snprintf(path, sizeof path, "%s/clip.json", j->out_dir);
		unlink(path);
		for (i = 0; r->o->outputs && r->o->outputs[i]; i++) {
			snprintf(path, sizeof path, "%s/%s", j->out_dir, r->o->outputs[i]);
			unlink(path);
		}
	}
	if (pipe2(p, O_CLOEXEC) != 0)
		return wl_err_set(err, WL_EIO, "cannot create a pipe for a worker: %s", strerror(errno));
	fflush(NULL);
	pid = fork();
	if (pid < 0) {
		close(p[0]);
		close(p[1]);
		return wl_err_set(err, WL_EIO, "cannot start a worker for '%s': %s", j->rel, strerror(errno));
	}
	if (pid == 0) {
		close(p[0]);
		batch_worker_main(r, j, p[1], parent);
	}
	close(p[1]);
	fcntl(p[0], F_SETFL, O_NONBLOCK);
	j->pid = pid;
	j->fd = p[0];
	j->blen = 0;
	j->msg[0] = '\0';
	j->frames = 0;
	j->total = -1;
	j->t0 = batch_now_s();
	r->running++;
	batch_journal(r->journal_fd, "start", j->rel, j->hash, NULL);
	emit(r, WL_BATCH_EV_START, j->rel, NULL);
	return WL_OK;
}

/* A worker's pipe reached end of file: collect its status, check its files,
 * write clip.json and the journal. */
static void finish_job(runner *r, clipjob *j)
{
	int ws = 0, ok;
	char msg[600];
	wl_err err;
	size_t i;
	double el = batch_now_s() - j->t0;

	while (waitpid(j->pid, &ws, 0) < 0 && errno == EINTR)
		;
	close(j->fd);
	j->pid = 0;
	j->fd = -1;
	r->running--;
	r->frames_done += j->frames;
	ok = WIFEXITED(ws) && WEXITSTATUS(ws) == 0;
	msg[0] = '\0';
	if (WIFSIGNALED(ws))
		snprintf(msg, sizeof msg,
		         "%s: the worker was killed by signal %d (%s): a bug; please report it with the clip",
		         j->rel, WTERMSIG(ws), strsignal(WTERMSIG(ws)));
	else if (!ok)
		snprintf(msg, sizeof msg, "%s", j->msg[0] ? j->msg : "the clip failed without a message");
	for (i = 0; ok && r->o->outputs && r->o->outputs[i]; i++) {
		char path[PATH_MAX];
		struct stat st;
		snprintf(path, sizeof path, "%s/%s", j->out_dir, r->o->outputs[i]);
		if (stat(path, &st) != 0) {
			snprintf(msg, sizeof msg,
			         "%s: the clip's processing wrote no '%s': a bug; please report it", j->rel,
			         r->o->outputs[i]);
			ok = 0;
		}
	}
	wl_err_clear(&err);
	if (wl_batch_mark(j->out_dir, &j->job, j->hash, ok, msg, el, &err) != WL_OK) {
		ok = 0;
		snprintf(msg, sizeof msg, "%s", err.msg);
	}
	r->finished++;
	if (ok) {
		r->res->done++;
		batch_journal(r->journal_fd, "done", j->rel, j->hash, NULL);
		emit(r, WL_BATCH_EV_DONE, j->rel, NULL);
	} else {
		r->res->failed++;
		batch_journal(r->journal_fd, "fail", j->rel, j->hash, msg);
		emit(r, WL_BATCH_EV_FAIL, j->rel, msg);
	}
}

/* Waits for any worker to report or end (at most 200 ms). */
static void pump(runner *r)
{
	struct pollfd pf[MAX_JOBS];
	clipjob *who[MAX_JOBS];
	size_t i, n = 0;
	for (i = 0; i < r->njobs && n < MAX_JOBS; i++)
		if (r->jobs[i].pid > 0) {
			pf[n].fd = r->jobs[i].fd;
			pf[n].events = POLLIN;
			pf[n].revents = 0;
			who[n++] = &r->jobs[i];
		}
	if (!n || poll(pf, n, 200) <= 0)
		return;
	for (i = 0; i < n; i++) {
		clipjob *j = who[i];
		ssize_t k;
		if (!pf[i].revents)
			continue;
		for (;;) {
			k = read(j->fd, j->buf + j->blen, sizeof j->buf - j->blen);
			if (k > 0) {
				j->blen += (size_t)k;
				batch_worker_parse(j);
				continue;
			}
			if (k < 0 && (errno == EAGAIN || errno == EINTR))
				break;
			finish_job(r, j); /* end of file or a broken pipe */
			break;
		}
	}
	if (batch_now_s() - r->t_last_ev >= 0.2) {
		r->t_last_ev = batch_now_s();
		for (i = 0; i < r->njobs; i++)
			if (r->jobs[i].pid > 0) {
				emit(r, WL_BATCH_EV_PROGRESS, r->jobs[i].rel, NULL);
				break;
			}
	}
}

/* ---- set-up ----------------------------------------------------------- */

static int ncores(void)
{
	long n = sysconf(_SC_NPROCESSORS_ONLN);
	return n > 0 ? (int)n : 1;
}

static wl_status prepare_job(runner *r, const wl_manifest *m, const char *rel, clipjob *j, wl_err *err)
{
	const wl_batch_opts *o = r->o;
	const wl_manifest_row *row = m ? wl_manifest_find(m, rel) : NULL;
	char name[PATH_MAX];
	size_t i, k = 0;
	double plane = NAN;
	wl_err herr;

	memset(j, 0, sizeof *j);
	j->fd = -1;
	snprintf(j->rel, sizeof j->rel, "%s", rel);
	snprintf(j->clip_path, sizeof j->clip_path, "%s/%s", o->clip_dir, rel);
	snprintf(j->out_dir, sizeof j->out_dir, "%s/clips/%s", o->out_dir,
	         wl_batch_clip_name(rel, name, sizeof name));
	snprintf(j->cal, sizeof j->cal, "%s", o->cal_path ? o->cal_path : "");
	if (m) {
		j->names = calloc(m->ncols ? m->ncols : 1, sizeof *j->names);
		j->values = calloc(m->ncols ? m->ncols : 1, sizeof *j->values);
		if (!j->names || !j->values)
			return wl_err_set(err, WL_ENOMEM, "out of memory preparing the batch");
		for (i = 0; i < m->ncols; i++) {
			if (wl_manifest_is_clip_col(m, i))
				continue;
			j->names[k] = m->cols[i];
			j->values[k++] = row ? row->values[i] : "";
		}
		if (row && row->opts.cal)
			snprintf(j->cal, sizeof j->cal, "%s", row->opts.cal);
		if (row)
			plane = row->opts.plane_height_m;
	}
	j->job.clip_path = j->clip_path;
	j->job.clip_rel = j->rel;
	j->job.out_dir = j->out_dir;
	j->job.cal_path = j->cal[0] ? j->cal : NULL;
	j->job.plane_height_m = plane;
	j->job.nparams = k;
	j->job.param_names = j->names;
	j->job.param_values = j->values;
	wl_err_clear(&herr);
	if (!j->cal[0])
		snprintf(j->hash_err, sizeof j->hash_err,
		         "%s: no calibration: give --cal, or a 'cal' cell in the manifest row", rel);
	else if (wl_batch_settings_hash(o->settings, j->cal, plane, j->hash, &herr) != WL_OK)
		snprintf(j->hash_err, sizeof j->hash_err, "%s: %s", rel, herr.msg);
	return wl_mkdirs(j->out_dir, err);
}

static wl_status write_batch_json(const wl_batch_opts *o, const wl_manifest *m, wl_err *err)
{
	char path[PATH_MAX], msg[PATH_MAX + 256];
	cJSON *root = cJSON_CreateObject(), *miss;
	wl_status s;
	size_t i;
	if (!root)
		return wl_err_set(err, WL_ENOMEM, "out of memory writing batch.json");
	cJSON_AddStringToObject(root, "clip_dir", o->clip_dir);
	cJSON_AddStringToObject(root, "manifest", o->manifest_path ? o->manifest_path : "");
	cJSON_AddStringToObject(root, "cal", o->cal_path ? o->cal_path : "");
	cJSON_AddStringToObject(root, "x_col", o->sweep.x_col ? o->sweep.x_col : "");
	cJSON_AddStringToObject(root, "group_col", o->sweep.group_col ? o->sweep.group_col : "");
	cJSON_AddNumberToObject(root, "body_diameter_m", o->sweep.body_diameter_m);
	miss = cJSON_AddArrayToObject(root, "missing");
	for (i = 0; m && miss && i < m->nrows; i++) {
		cJSON *e;
		if (m->rows[i].found)
			continue;
		e = cJSON_CreateObject();
		if (!e)
			break;
		snprintf(msg, sizeof msg,
		         "%s:%ld: clip '%s' is not under '%s': check the name in the manifest", m->path,
		         m->rows[i].line, m->rows[i].clip, o->clip_dir);
		cJSON_AddStringToObject(e, "clip", m->rows[i].clip);
		cJSON_AddStringToObject(e, "error", msg);
		cJSON_AddItemToArray(miss, e);
	}
	snprintf(path, sizeof path, "%s/batch.json", o->out_dir);
	s = wl_json_save(path, root, err);
	cJSON_Delete(root);
	return s;
}

static wl_status take_lock(const wl_batch_opts *o, int *fd, wl_err *err)
{
	char path[PATH_MAX];
	snprintf(path, sizeof path, "%s/.lock-%d", o->out_dir, o->shard_count > 1 ? o->shard_index : 0);
	*fd = open(path, O_RDWR | O_CREAT | O_CLOEXEC, 0644);
	if (*fd < 0)
		return wl_err_set(err, WL_EIO, "cannot create '%s': %s: check that the folder is writable",
		                  path, strerror(errno));
	if (flock(*fd, LOCK_EX | LOCK_NB) != 0) {
		close(*fd);
		*fd = -1;
		return wl_err_set(err, WL_EINVAL,
		                  "another batch is writing into '%s': wait for it to end or use another -o",
		                  o->out_dir);
	}
	return WL_OK;
}

static void warn(runner *r, const char *fmt, const char *a, const char *b)
{
	char msg[PATH_MAX * 2];
	snprintf(msg, sizeof msg, fmt, a, b);
	batch_journal(r->journal_fd, "warn", NULL, NULL, msg);
	emit(r, WL_BATCH_EV_WARN, NULL, msg);
}

wl_status wl_batch_run(const wl_batch_opts *o, wl_batch_result *res, wl_err *err)
{
	wl_manifest m;
	wl_cliplist cl = {0, NULL};
	runner r;
	int lock_fd = -1, have_m = 0, jobs;
	size_t i, next = 0;
	wl_status s;
	char path[PATH_MAX];

	memset(res, 0, sizeof *res);
	memset(&r, 0, sizeof r);
	r.o = o;
	r.res = res;
	r.journal_fd = -1;
	wl_manifest_init(&m);
	if (!o->fn)
		return wl_err_set(err, WL_EINVAL, "no clip function given to the batch");
	if ((s = wl_mkdirs(o->out_dir, err)))
		return s;
	snprintf(path, sizeof path, "%s/clips", o->out_dir);
	if ((s = wl_mkdirs(path, err)) || (s = take_lock(o, &lock_fd, err)))
		return s;
	batch_remove_stale_tmp(o->out_dir);
	if (o->manifest_path) {
		if ((s = wl_manifest_load(o->manifest_path, &m, err)))
			goto out;
		have_m = 1;
	}
	if ((s = wl_batch_discover(o->clip_dir, o->out_dir, &cl, err)))
		goto out;
	if (o->shard_count > 1)
		snprintf(path, sizeof path, "%s/journal-%d.log", o->out_dir, o->shard_index);
	else
		snprintf(path, sizeof path, "%s/journal.log", o->out_dir);
	r.journal_fd = open(path, O_WRONLY | O_APPEND | O_CREAT | O_CLOEXEC, 0644);
	r.jobs = calloc(cl.n ? cl.n : 1, sizeof *r.jobs);
	if (!r.jobs) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory for %zu clips", cl.n);
		goto out;
	}
	r.t_start = batch_now_s();
	for (i = 0; i < cl.n; i++) {
		wl_manifest_row *row = have_m ? (wl_manifest_row *)wl_manifest_find(&m, cl.rel[i]) : NULL;
		if (row)
			row->found = 1;
		if (o->shard_count > 1 && (int)(i % (size_t)o->shard_count) != o->shard_index)
			continue;
		if (have_m && !row) {
			res->unlisted++;
			warn(&r, "%s: no row in the manifest '%s': processed with empty parameter cells",
			     cl.rel[i], o->manifest_path);
		}
		if ((s = prepare_job(&r, have_m ? &m : NULL, cl.rel[i], &r.jobs[r.njobs], err)))
			goto out;
		r.njobs++;
	}
	for (i = 0; have_m && i < m.nrows; i++) {
		if (m.rows[i].found)
			continue;
		res->missing++;
		snprintf(path, sizeof path, "%s:%ld", m.path, m.rows[i].line);
		warn(&r, "%s: clip '%s' is not under the clip folder: check the name", path, m.rows[i].clip);
	}
	if ((s = write_batch_json(o, have_m ? &m : NULL, err)))
		goto out;
	res->clips = r.njobs;
	jobs = o->jobs > 0 ? o->jobs : ncores();
	if (jobs > MAX_JOBS)
		jobs = MAX_JOBS;
	while (next < r.njobs || r.running) {
		while (next < r.njobs && (int)r.running < jobs) {
			clipjob *j = &r.jobs[next++];
			int differ = 0;
			if (j->hash_err[0]) {
				wl_err e2;
				wl_err_clear(&e2);
				wl_batch_mark(j->out_dir, &j->job, "", 0, j->hash_err, 0, &e2);
				res->failed++;
				r.finished++;
				batch_journal(r.journal_fd, "fail", j->rel, NULL, j->hash_err);
				emit(&r, WL_BATCH_EV_FAIL, j->rel, j->hash_err);
				continue;
			}
			if (!o->force &&
			    batch_is_complete(j->out_dir, &j->job, j->hash, o->outputs, &differ)) {
				if (differ) /* new parameter cells only: no need to redo the clip */
					wl_batch_mark(j->out_dir, &j->job, j->hash, 1, NULL, 0, NULL);
				res->skipped++;
				r.finished++;
				batch_journal(r.journal_fd, "skip", j->rel, j->hash, NULL);
				emit(&r, WL_BATCH_EV_SKIP, j->rel, NULL);
				continue;
			}
			if ((s = start_job(&r, j, err)))
				goto out;
		}
		pump(&r);
	}
	if (o->shard_count <= 1) {
		wl_batch_result mr;
		if ((s = wl_batch_merge(o->out_dir, &o->sweep, &mr, err)))
			goto out;
		res->runs = mr.runs;
	}
out:
	/* on a set-up error while workers run, stop them: their clips are redone */
	for (i = 0; i < r.njobs; i++)
		if (r.jobs[i].pid > 0) {
			kill(r.jobs[i].pid, SIGKILL);
			waitpid(r.jobs[i].pid, NULL, 0);
			close(r.jobs[i].fd);
		}
	for (i = 0; i < r.njobs; i++) {
		free(r.jobs[i].names);
		free(r.jobs[i].values);
	}
	free(r.jobs);
	if (r.journal_fd >= 0)
		close(r.journal_fd);
	if (lock_fd >= 0)
		close(lock_fd);
	wl_cliplist_release(&cl);
	wl_manifest_release(&m);
	return s;
}
