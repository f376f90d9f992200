/*
 * runner.c: the resumable job runner (see batch.h).
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

#include <dirent.h>
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
#include <sys/prctl.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "core/afile.h"
#include "core/csvio.h"
#include "core/jsonio.h"

#define MAX_JOBS 256

static double now_s(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

/* ---- settings hash ---------------------------------------------------- */

static unsigned long long fnv(unsigned long long h, const void *p, size_t n)
{
	const unsigned char *b = p;
	size_t i;
	for (i = 0; i < n; i++) {
		h ^= b[i];
		h *= 1099511628211ULL;
	}
	return h;
}

wl_status wl_batch_settings_hash(const char *settings, const char *cal_path, double plane_height_m,
                                 char out[17], wl_err *err)
{
	unsigned long long h = 1469598103934665603ULL;
	char num[WL_NUMBUF];
	char *cal = NULL;
	size_t len = 0;
	if (settings)
		h = fnv(h, settings, strlen(settings) + 1);
	if (cal_path) {
		wl_status s = wl_read_file(cal_path, WL_JSON_MAX_BYTES, &cal, &len, err);
		if (s)
			return s;
		h = fnv(h, cal, len);
		free(cal);
	}
	h = fnv(h, "\n", 1);
	if (isfinite(plane_height_m)) {
		wl_fmt_g(num, plane_height_m, 17);
		h = fnv(h, num, strlen(num));
	}
	snprintf(out, 17, "%016llx", h);
	return WL_OK;
}

/* ---- clip.json -------------------------------------------------------- */

static void utc_now(char *buf, size_t cap)
{
	time_t t = time(NULL);
	struct tm tm;
	gmtime_r(&t, &tm);
	strftime(buf, cap, "%Y-%m-%dT%H:%M:%SZ", &tm);
}

static void mtime_text(const struct stat *st, char *buf, size_t cap)
{
	snprintf(buf, cap, "%lld.%09ld", (long long)st->st_mtim.tv_sec, (long)st->st_mtim.tv_nsec);
}

wl_status wl_batch_mark(const char *out_dir, const wl_batch_job *job, const char *settings_hash, int ok,
                        const char *error, double elapsed_s, wl_err *err)
{
	char path[PATH_MAX], buf[64];
	struct stat st;
	cJSON *root = cJSON_CreateObject(), *params;
	wl_status s;
	size_t i;
	if (!root)
		return wl_err_set(err, WL_ENOMEM, "out of memory writing clip.json");
	cJSON_AddStringToObject(root, "clip", job->clip_rel);
	cJSON_AddStringToObject(root, "status", ok ? "ok" : "failed");
	cJSON_AddStringToObject(root, "error", ok ? "" : (error ? error : "failed"));
	if (stat(job->clip_path, &st) == 0) {
		cJSON_AddNumberToObject(root, "input_size", (double)st.st_size);
		mtime_text(&st, buf, sizeof buf);
		cJSON_AddStringToObject(root, "input_mtime", buf);
	}
	cJSON_AddStringToObject(root, "settings_hash", settings_hash ? settings_hash : "");
	cJSON_AddStringToObject(root, "cal", job->cal_path ? job->cal_path : "");
	params = cJSON_AddObjectToObject(root, "params");
	for (i = 0; params && i < job->nparams; i++)
		cJSON_AddStringToObject(params, job->param_names[i], job->param_values[i]);
	cJSON_AddNumberToObject(root, "elapsed_s", round(elapsed_s * 1000) / 1000);
	utc_now(buf, sizeof buf);
	cJSON_AddStringToObject(root, "finished_utc", buf);
	snprintf(path, sizeof path, "%s/clip.json", out_dir);
	s = wl_json_save(path, root, err);
	cJSON_Delete(root);
	return s;
}

/* Complete: clip.json says ok for this very input and these settings, and
 * every output exists and is no older than the input. */
static int is_complete(const char *out_dir, const wl_batch_job *job, const char *hash,
                       const char *const *outputs, int *params_differ)
{
	char path[PATH_MAX], mt[64];
	cJSON *root = NULL;
	const cJSON *params;
	struct stat in, o;
	int ok = 0;
	size_t i;
	*params_differ = 0;
	snprintf(path, sizeof path, "%s/clip.json", out_dir);
	if (stat(job->clip_path, &in) != 0 || wl_json_load(path, &root, NULL) != WL_OK)
		return 0;
	mtime_text(&in, mt, sizeof mt);
	if (strcmp(wl_json_string_or(root, "status", ""), "ok") != 0 ||
	    wl_json_number_or(root, "input_size", -1) != (double)in.st_size ||
	    strcmp(wl_json_string_or(root, "input_mtime", ""), mt) != 0 ||
	    strcmp(wl_json_string_or(root, "settings_hash", ""), hash) != 0)
		goto out;
	for (i = 0; outputs && outputs[i]; i++) {
		snprintf(path, sizeof path, "%s/%s", out_dir, outputs[i]);
		if (stat(path, &o) != 0 || o.st_mtim.tv_sec < in.st_mtim.tv_sec ||
		    (o.st_mtim.tv_sec == in.st_mtim.tv_sec && o.st_mtim.tv_nsec < in.st_mtim.tv_nsec))
			goto out;
	}
	ok = 1;
	params = cJSON_GetObjectItemCaseSensitive(root, "params");
	if (cJSON_GetArraySize(params) != (int)job->nparams) {
		*params_differ = 1;
	} else {
		for (i = 0; i < job->nparams; i++)
			if (strcmp(wl_json_string_or(params, job->param_names[i], "\x01"),
			           job->param_values[i]) != 0)
				*params_differ = 1;
	}
out:
	cJSON_Delete(root);
	return ok;
}

/* Leftovers of a worker that was killed: temporary files of afile. */
static void remove_stale_tmp(const char *dir)
{
	DIR *d = opendir(dir);
	struct dirent *e;
	char path[PATH_MAX];
	if (!d)
		return;
	while ((e = readdir(d)))
		if (e->d_name[0] == '.' && strstr(e->d_name, ".tmp-")) {
			snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
			unlink(path);
		}
	closedir(d);
}

/* ---- the journal ------------------------------------------------------ */

/* Appends one line; a failure is kept in *failed (the first errno) and
 * reported when the batch ends. */
static void journal(int fd, int *failed, const char *event, const char *clip, const char *hash,
                    const char *msg)
{
	char line[1024], ts[32];
	int n;
	if (fd < 0)
		return;
	utc_now(ts, sizeof ts);
	n = snprintf(line, sizeof line, "%s\t%s\t%s\t%s\t%s\n", ts, event, clip ? clip : "", hash ? hash : "",
	             msg ? msg : "");
	if (n >= (int)sizeof line) {
		n = (int)sizeof line;
		line[n - 1] = '\n';
	}
	/* one write() per line: O_APPEND puts it whole at the end; the journal
	 * is history only (clip.json decides), but a lost line is reported */
	if (write(fd, line, (size_t)n) != n && !*failed)
		*failed = errno ? errno : EIO;
}

/* ---- jobs ------------------------------------------------------------- */

typedef struct {
	wl_batch_job job;
	char rel[PATH_MAX], clip_path[PATH_MAX], out_dir[PATH_MAX], cal[PATH_MAX];
	char hash[17];
	char hash_err[512];
	const char **names, **values;
	/* running state */
	pid_t pid;
	int fd;
	char buf[1024];
	size_t blen;
	char msg[512];
	long frames, total;
	double t0;
} clipjob;

typedef struct {
	const wl_batch_opts *o;
	wl_batch_result *res;
	clipjob *jobs;
	size_t njobs;
	size_t finished;
	size_t running;
	long frames_done;
	double t_start, t_last_ev;
	int journal_fd, journal_errno;
} runner;

static void emit(runner *r, wl_batch_ev_kind kind, const char *clip, const char *msg)
{
	wl_batch_event ev;
	double el, units = 0, rate;
	size_t i;
	long frames = r->frames_done;
	if (!r->o->on_event)
		return;
	el = now_s() - r->t_start;
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

typedef struct {
	int fd;
	double t_last;
} child_ctx;

static void child_progress(void *pctx, long done, long total)
{
	child_ctx *c = pctx;
	char b[64];
	int n;
	double t = now_s();
	if (t - c->t_last < 0.1)
		return;
	c->t_last = t;
	n = snprintf(b, sizeof b, "P %ld %ld\n", done, total);
	if (write(c->fd, b, (size_t)n) < 0) {
		/* the parent is gone; PR_SET_PDEATHSIG ends us */
	}
}

static void child_main(runner *r, clipjob *j, int fd, pid_t parent)
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

static wl_status start_job(runner *r, clipjob *j, wl_err *err)
{
	int p[2];
	pid_t pid, parent = getpid();
	size_t i;
	remove_stale_tmp(j->out_dir);
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
		child_main(r, j, p[1], parent);
	}
	close(p[1]);
	fcntl(p[0], F_SETFL, O_NONBLOCK);
	j->pid = pid;
	j->fd = p[0];
	j->blen = 0;
	j->msg[0] = '\0';
	j->frames = 0;
	j->total = -1;
	j->t0 = now_s();
	r->running++;
	journal(r->journal_fd, &r->journal_errno, "start", j->rel, j->hash, NULL);
	emit(r, WL_BATCH_EV_START, j->rel, NULL);
	return WL_OK;
}

static void parse_lines(clipjob *j)
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

/* A worker's pipe reached end of file: collect its status, check its files,
 * write clip.json and the journal. */
static void finish_job(runner *r, clipjob *j)
{
	int ws = 0, ok;
	char msg[600];
	wl_err err;
	size_t i;
	double el = now_s() - j->t0;

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
		journal(r->journal_fd, &r->journal_errno, "done", j->rel, j->hash, NULL);
		emit(r, WL_BATCH_EV_DONE, j->rel, NULL);
	} else {
		r->res->failed++;
		journal(r->journal_fd, &r->journal_errno, "fail", j->rel, j->hash, msg);
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
				parse_lines(j);
				continue;
			}
			if (k < 0 && (errno == EAGAIN || errno == EINTR))
				break;
			finish_job(r, j); /* end of file or a broken pipe */
			break;
		}
	}
	if (now_s() - r->t_last_ev >= 0.2) {
		r->t_last_ev = now_s();
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

static void resolve_cal(const wl_manifest *m, const char *cell, char *out, size_t cap)
{
	const char *slash;
	if (cell[0] == '/' || !m->path || !(slash = strrchr(m->path, '/'))) {
		snprintf(out, cap, "%s", cell);
		return;
	}
	snprintf(out, cap, "%.*s/%s", (int)(slash - m->path), m->path, cell);
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
			if ((int)i == m->c_clip)
				continue;
			j->names[k] = m->cols[i];
			j->values[k++] = row ? row->values[i] : "";
		}
		if (row && m->c_cal >= 0 && row->values[m->c_cal][0])
			resolve_cal(m, row->values[m->c_cal], j->cal, sizeof j->cal);
		if (row && m->c_plane >= 0 && row->values[m->c_plane][0])
			wl_parse_double(row->values[m->c_plane], &plane);
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
	journal(r->journal_fd, &r->journal_errno, "warn", NULL, NULL, msg);
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
	char path[PATH_MAX], jpath[PATH_MAX];

	memset(res, 0, sizeof *res);
	memset(&r, 0, sizeof r);
	jpath[0] = '\0';
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
	remove_stale_tmp(o->out_dir);
	if (o->manifest_path) {
		if ((s = wl_manifest_load(o->manifest_path, &m, err)))
			goto out;
		have_m = 1;
	}
	if ((s = wl_batch_discover(o->clip_dir, o->out_dir, &cl, err)))
		goto out;
	if (o->shard_count > 1)
		snprintf(jpath, sizeof jpath, "%s/journal-%d.log", o->out_dir, o->shard_index);
	else
		snprintf(jpath, sizeof jpath, "%s/journal.log", o->out_dir);
	r.journal_fd = open(jpath, O_WRONLY | O_APPEND | O_CREAT | O_CLOEXEC, 0644);
	if (r.journal_fd < 0)
		r.journal_errno = errno;
	r.jobs = calloc(cl.n ? cl.n : 1, sizeof *r.jobs);
	if (!r.jobs) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory for %zu clips", cl.n);
		goto out;
	}
	r.t_start = now_s();
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
				journal(r.journal_fd, &r.journal_errno, "fail", j->rel, NULL, j->hash_err);
				emit(&r, WL_BATCH_EV_FAIL, j->rel, j->hash_err);
				continue;
			}
			if (!o->force && is_complete(j->out_dir, &j->job, j->hash, o->outputs, &differ)) {
				if (differ) /* new parameter cells only: no need to redo the clip */
					wl_batch_mark(j->out_dir, &j->job, j->hash, 1, NULL, 0, NULL);
				res->skipped++;
				r.finished++;
				journal(r.journal_fd, &r.journal_errno, "skip", j->rel, j->hash, NULL);
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
	if (r.journal_fd >= 0 && close(r.journal_fd) != 0 && !r.journal_errno)
		r.journal_errno = errno;
	if (s == WL_OK && r.journal_errno)
		s = wl_err_set(
		        err, WL_EIO,
		        "cannot write '%s': %s: the clips' results are complete, their history is not%s",
		        jpath, strerror(r.journal_errno),
		        r.journal_errno == ENOSPC ? ": free some space and run again" : "");
	if (lock_fd >= 0)
		close(lock_fd);
	wl_cliplist_release(&cl);
	wl_manifest_release(&m);
	return s;
}
