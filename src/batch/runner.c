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
#include <sched.h>
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
#include "wl_version.h"

static const char *const *outputs(const runner *r)
{
	return r->o->outputs ? r->o->outputs : wl_batch_outputs;
}

static void emit(runner *r, wl_batch_ev_kind kind, const char *clip, const char *msg)
{
	wl_batch_event ev;
	if (!r->o->on_event)
		return;
	memset(&ev, 0, sizeof ev);
	ev.kind = kind;
	ev.clip = clip;
	ev.msg = msg;
	ev.finished = r->finished;
	ev.total = r->njobs;
	ev.failed = r->res->failed;
	ev.running = r->running;
	r->o->on_event(&ev, r->o->ev_ctx);
}

/* Progress: clips finished in this run (not the skipped ones), counting the
 * part of each running clip that its worker reported, of the clips to run. */
static void progress(runner *r)
{
	double units = (double)(r->res->done + r->res->failed), todo = (double)(r->njobs - r->res->skipped);
	for (size_t i = 0; i < r->njobs; i++)
		if (r->jobs[i].pid > 0 && r->jobs[i].total > 0)
			units += fmin(1.0, r->jobs[i].frames / r->jobs[i].total);
	wl_diag_progress(r->o->diag, "batch", units, todo, NAN);
}

void batch_warn(runner *r, const char *clip, const char *msg)
{
	batch_journal(r->journal_fd, &r->journal_errno, "warn", clip, NULL, msg);
	if (clip)
		wl_diag_warn(r->o->diag, "batch", "%s: %s", clip, msg);
	else
		wl_diag_warn(r->o->diag, "batch", "%s", msg);
}

static wl_status start_job(runner *r, clipjob *j, wl_err *err)
{
	int p[2];
	pid_t pid, parent = getpid();
	size_t i;
	batch_remove_stale_tmp(j->out_dir, NULL); /* the clip's folder is this run's alone */
	/* the old done marker goes first: from here the folder is not complete */
	{
		char path[PATH_MAX];
		snprintf(path, sizeof path, "%s/clip.json", j->out_dir);
		unlink(path);
		for (i = 0; outputs(r)[i]; i++) {
			snprintf(path, sizeof path, "%s/%s", j->out_dir, outputs(r)[i]);
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
	j->runs = 0;
	j->t0 = batch_now_s();
	r->running++;
	batch_journal(r->journal_fd, &r->journal_errno, "start", j->rel, j->hash, NULL);
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
	/* a worker that crashed leaves the temporary files of what it was writing */
	batch_remove_stale_tmp(j->out_dir, NULL);
	ok = WIFEXITED(ws) && WEXITSTATUS(ws) == 0;
	msg[0] = '\0';
	if (WIFSIGNALED(ws))
		snprintf(msg, sizeof msg,
		         "%s: the worker was killed by signal %d (%s): a bug; please report it with the clip",
		         j->rel, WTERMSIG(ws), strsignal(WTERMSIG(ws)));
	else if (!ok)
		snprintf(msg, sizeof msg, "%s", j->msg[0] ? j->msg : "the clip failed without a message");
	for (i = 0; ok && outputs(r)[i]; i++) {
		char path[PATH_MAX];
		struct stat st;
		snprintf(path, sizeof path, "%s/%s", j->out_dir, outputs(r)[i]);
		if (stat(path, &st) != 0) {
			snprintf(msg, sizeof msg,
			         "%s: the clip's processing wrote no '%s': a bug; please report it", j->rel,
			         outputs(r)[i]);
			ok = 0;
		}
	}
	wl_err_clear(&err);
	if (batch_mark(j->out_dir, &j->job, j->digest, j->size, j->hash, ok, msg, el, &err) != WL_OK) {
		ok = 0;
		snprintf(msg, sizeof msg, "%s", err.msg);
	}
	r->finished++;
	if (ok) {
		r->res->done++;
		batch_journal(r->journal_fd, &r->journal_errno, "done", j->rel, j->hash, NULL);
		emit(r, WL_BATCH_EV_DONE, j->rel, NULL);
	} else {
		r->res->failed++;
		batch_journal(r->journal_fd, &r->journal_errno, "fail", j->rel, j->hash, msg);
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
				batch_worker_parse(j, r);
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
		progress(r);
	}
}

/* ---- set-up ----------------------------------------------------------- */

int wl_batch_cpus(void)
{
	cpu_set_t set;
	const char *env = getenv("SLURM_CPUS_PER_TASK");
	long n = 0;
	CPU_ZERO(&set);
	if (sched_getaffinity(0, sizeof set, &set) == 0)
		n = CPU_COUNT(&set);
	if (n <= 0) {
		n = sysconf(_SC_NPROCESSORS_ONLN);
		if (n <= 0)
			n = 1;
	}
	/* Slurm without task binding (TaskPlugin=task/none) leaves the mask
	 * whole: the allocation is then only in the environment */
	if (env && env[0]) {
		char *end;
		long k = strtol(env, &end, 10);
		if (*end == '\0' && k > 0 && k < n)
			n = k;
	}
	return n > 4096 ? 4096 : (int)n;
}

/* The hash of a CAL.json's bytes, read once per distinct path in a run. */
static wl_status cal_hash(runner *r, const char *path, char out[17], wl_err *err)
{
	const char *files[] = {path, NULL};
	wl_status st;
	for (size_t i = 0; i < r->ncal; i++)
		if (strcmp(r->cal[i].path, path) == 0) {
			memcpy(out, r->cal[i].hash, 17);
			return WL_OK;
		}
	if ((st = wl_batch_settings_hash(NULL, files, out, err)))
		return st;
	if (r->ncal < sizeof r->cal / sizeof r->cal[0]) {
		snprintf(r->cal[r->ncal].path, sizeof r->cal[r->ncal].path, "%s", path);
		memcpy(r->cal[r->ncal].hash, out, 17);
		r->ncal++;
	}
	return WL_OK;
}

/* The clip's settings hash: this version, the batch's settings text, every
 * option of the clip (the row applied) and its calibration's bytes.  A row
 * whose options cannot be applied (a bad ROBOTS.csv, colour ranges in tag
 * mode) fails its clip with the message, before any work. */
static void job_hash(runner *r, clipjob *j)
{
	wl_process_opts *po = malloc(sizeof *po);
	char ch[17], *desc = NULL, *text = NULL;
	size_t n;
	wl_err e;
	wl_err_clear(&e);
	if (!po || wl_batch_clip_opts(r->o->proc, j->job.row ? &j->job.row->opts : NULL, po, &e) ||
	    wl_track_opts_check(&po->track, &e) || cal_hash(r, j->cal, ch, &e)) {
		snprintf(j->hash_err, sizeof j->hash_err, "%s: %s", j->rel, po ? e.msg : "out of memory");
		goto out;
	}
	desc = wl_process_opts_describe(po);
	n = (desc ? strlen(desc) : 0) + (r->o->settings ? strlen(r->o->settings) : 0) + 128;
	if (!desc || !(text = malloc(n))) {
		snprintf(j->hash_err, sizeof j->hash_err, "%s: out of memory", j->rel);
		goto out;
	}
	snprintf(text, n, "wakeline %s\n%s\n%s\ncal %s\n", WL_VERSION, r->o->settings ? r->o->settings : "",
	         desc, ch);
	wl_batch_settings_hash(text, NULL, j->hash, NULL);
out:
	free(text);
	free(desc);
	free(po);
}

/* The manifest's rows sorted by clip, for lookups in O(log n). */
static int cmp_row(const void *a, const void *b)
{
	return strcmp((*(wl_manifest_row *const *)a)->clip, (*(wl_manifest_row *const *)b)->clip);
}

static wl_manifest_row *find_row(wl_manifest_row **idx, size_t n, const char *clip)
{
	size_t lo = 0, hi = n;
	while (lo < hi) {
		size_t mid = lo + (hi - lo) / 2;
		int c = strcmp(idx[mid]->clip, clip);
		if (c == 0)
			return idx[mid];
		if (c < 0)
			lo = mid + 1;
		else
			hi = mid;
	}
	return NULL;
}

static wl_status prepare_job(runner *r, const wl_manifest *m, const wl_manifest_row *row, const char *rel,
                             clipjob *j, wl_err *err)
{
	const wl_batch_opts *o = r->o;
	char name[PATH_MAX], abs[PATH_MAX * 2];
	size_t i, k = 0;

	memset(j, 0, sizeof *j);
	j->fd = -1;
	snprintf(j->rel, sizeof j->rel, "%s", rel);
	snprintf(j->clip_path, sizeof j->clip_path, "%s/%s", o->clip_dir, rel);
	wl_batch_clip_name(rel, name, sizeof name);
	snprintf(j->out_dir, sizeof j->out_dir, "%s/clips/%s", o->out_dir, name);
	snprintf(j->cal, sizeof j->cal, "%s",
	         row && row->opts.cal ? row->opts.cal
	         : o->cal_path        ? o->cal_path
	                              : "");
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
	}
	/* the worker runs in OUT and sees every path relative to it, so that
	 * what it writes (clean.json, summary.json, messages) names no folder
	 * of this node */
	snprintf(abs, sizeof abs, "%s/%s", r->clip_dir_abs, rel);
	j->wclip = batch_rel_to(r->out_abs, abs);
	j->wout = malloc(strlen(name) + 8);
	j->wcal = batch_rel_to(r->out_abs, j->cal);
	if (!j->wclip || !j->wout || !j->wcal)
		return wl_err_set(err, WL_ENOMEM, "out of memory preparing the batch");
	sprintf(j->wout, "clips/%s", name);
	j->job.clip_path = j->wclip;
	j->job.clip_rel = j->rel;
	j->job.out_dir = j->wout;
	j->job.cal_path = j->wcal[0] ? j->wcal : NULL;
	j->job.row = row;
	j->job.nparams = k;
	j->job.param_names = j->names;
	j->job.param_values = j->values;
	j->job.threads = r->threads;
	if (!j->cal[0])
		snprintf(j->hash_err, sizeof j->hash_err,
		         "%s: no calibration: give --cal, or a 'cal' cell in the manifest row", rel);
	else
		job_hash(r, j);
	return wl_mkdirs(j->out_dir, err);
}

/* The lock of one shard (or of the unsharded batch) on OUT. */
typedef struct {
	int fd;                 /* flock: the open lock file, else -1 */
	char dir[PATH_MAX + 8]; /* mkdir: the lock directory, else "" */
} batch_lock;

static void lock_name(const wl_batch_opts *o, char *buf, size_t cap, const char *suffix)
{
	snprintf(buf, cap, "%s/.lock-%d%s", o->out_dir, o->shard_count > 1 ? o->shard_index : 0, suffix);
}

static wl_status take_flock(const wl_batch_opts *o, batch_lock *l, wl_err *err)
{
	char path[PATH_MAX + 8];
	lock_name(o, path, sizeof path, "");
	l->fd = open(path, O_RDWR | O_CREAT | O_CLOEXEC, 0644);
	if (l->fd < 0)
		return wl_err_set(err, WL_EIO, "cannot create '%s': %s: check that the folder is writable",
		                  path, strerror(errno));
	if (flock(l->fd, LOCK_EX | LOCK_NB) != 0) {
		int e = errno;
		close(l->fd);
		l->fd = -1;
		if (e == EWOULDBLOCK)
			return wl_err_set(
			        err, WL_EINVAL,
			        "another batch is writing into '%s' (it holds '%s'): wait for it to "
			        "end or use another -o",
			        o->out_dir, path);
		return wl_err_set(err, WL_EIO,
		                  "cannot lock '%s': flock failed: %s (errno %d): the file system may not "
		                  "support locks; run with --lock dir (a lock directory made with mkdir) "
		                  "or --lock none (no protection: then make sure no two runs of the same "
		                  "shard write into '%s' at once)",
		                  path, strerror(e), e, o->out_dir);
	}
	return WL_OK;
}

/* mkdir is atomic on every file system, network ones included; the
 * directory holds "owner": host, pid and time.  A directory left by a
 * killed run on this host (its pid gone) is taken over; one from another
 * host is not: its run may still be going. */
static wl_status take_dirlock(const wl_batch_opts *o, batch_lock *l, wl_err *err)
{
	char owner[PATH_MAX + 16], host[256] = "", line[512], utc[32];
	int attempt;
	lock_name(o, l->dir, sizeof l->dir, ".d");
	snprintf(owner, sizeof owner, "%s/owner", l->dir);
	gethostname(host, sizeof host - 1);
	for (attempt = 0; attempt < 2; attempt++) {
		char *text = NULL, ohost[256] = "", outc[64] = "";
		size_t len;
		long opid = 0;
		if (mkdir(l->dir, 0755) == 0) {
			batch_utc_now(utc, sizeof utc);
			snprintf(line, sizeof line, "%s %ld %s\n", host, (long)getpid(), utc);
			if (wl_write_file_atomic(owner, line, strlen(line), err) != WL_OK) {
				rmdir(l->dir);
				l->dir[0] = '\0';
				return err ? err->code : WL_EIO;
			}
			return WL_OK;
		}
		if (errno != EEXIST) {
			wl_status s = wl_err_set(err, WL_EIO, "cannot create the lock directory '%s': %s",
			                         l->dir, strerror(errno));
			l->dir[0] = '\0';
			return s;
		}
		if (wl_read_file(owner, 4096, &text, &len, NULL) == WL_OK) {
			if (sscanf(text, "%255s %ld %63s", ohost, &opid, outc) < 2)
				ohost[0] = '\0';
			free(text);
		}
		if (attempt == 0 && ohost[0] && strcmp(ohost, host) == 0 && opid > 0 &&
		    kill((pid_t)opid, 0) != 0 && errno == ESRCH) {
			unlink(owner); /* its run is gone: a killed batch on this host */
			rmdir(l->dir);
			continue;
		}
		{
			char who[400];
			wl_status s;
			if (ohost[0])
				snprintf(who, sizeof who, "host %s pid %ld%s%s", ohost, opid,
				         outc[0] ? " since " : "", outc);
			else
				snprintf(who, sizeof who, "a run that did not say who it is");
			s = wl_err_set(
			        err, WL_EINVAL,
			        "another batch is writing into '%s': the lock directory '%s' belongs to "
			        "%s: wait for it to end; if it is no longer running (killed, node "
			        "lost), remove that directory",
			        o->out_dir, l->dir, who);
			l->dir[0] = '\0';
			return s;
		}
	}
	l->dir[0] = '\0';
	return wl_err_set(err, WL_EIO, "cannot take the lock directory for '%s'", o->out_dir);
}

static wl_status take_lock(const wl_batch_opts *o, batch_lock *l, wl_err *err)
{
	l->fd = -1;
	l->dir[0] = '\0';
	switch (o->lock) {
	case WL_BATCH_LOCK_NONE:
		return WL_OK;
	case WL_BATCH_LOCK_DIR:
		return take_dirlock(o, l, err);
	default:
		return take_flock(o, l, err);
	}
}

static void drop_lock(batch_lock *l)
{
	if (l->fd >= 0)
		close(l->fd);
	l->fd = -1;
	if (l->dir[0]) {
		char owner[PATH_MAX + 16];
		snprintf(owner, sizeof owner, "%s/owner", l->dir);
		unlink(owner);
		rmdir(l->dir);
		l->dir[0] = '\0';
	}
}

/* A warning about the manifest: on screen with its path as typed, in the
 * journal (a file in OUT) with its path relative to OUT. */
static void warn_manifest(runner *r, const char *fmt, const char *a, const char *manifest,
                          const char *manifest_rel)
{
	char msg[PATH_MAX * 2];
	snprintf(msg, sizeof msg, fmt, a, manifest_rel);
	batch_journal(r->journal_fd, &r->journal_errno, "warn", NULL, NULL, msg);
	snprintf(msg, sizeof msg, fmt, a, manifest);
	wl_diag_warn(r->o->diag, "batch", "%s", msg);
}

/* The set-up both a run and a plan need: OUT and its absolute path, the
 * manifest, the clips (rows found marked), the manifest's sorted index. */
typedef struct {
	wl_manifest m;
	int have_m;
	wl_cliplist cl;
	wl_manifest_row **idx;
	char out_abs[PATH_MAX], clip_dir_abs[PATH_MAX];
	char cal_sha256[65];
} setup;

static void setup_release(setup *su)
{
	free(su->idx);
	wl_cliplist_release(&su->cl);
	wl_manifest_release(&su->m);
}

static wl_status setup_sweep(const wl_batch_opts *o, setup *su, wl_err *err)
{
	wl_status s;
	size_t i;
	if (o->manifest_path) {
		if ((s = wl_manifest_load(o->manifest_path, &su->m, err)))
			return s;
		su->have_m = 1;
		su->idx = malloc((su->m.nrows ? su->m.nrows : 1) * sizeof *su->idx);
		if (!su->idx)
			return wl_err_set(err, WL_ENOMEM, "out of memory reading the manifest");
		for (i = 0; i < su->m.nrows; i++)
			su->idx[i] = &su->m.rows[i];
		qsort(su->idx, su->m.nrows, sizeof *su->idx, cmp_row);
	}
	if ((s = wl_batch_discover(o->clip_dir, o->out_dir, &su->cl, err)))
		return s;
	for (i = 0; su->have_m && i < su->cl.n; i++) {
		wl_manifest_row *row = find_row(su->idx, su->m.nrows, su->cl.rel[i]);
		if (row)
			row->found = 1;
	}
	if (batch_abspath(o->out_dir, su->out_abs, sizeof su->out_abs) != 0 ||
	    batch_abspath(o->clip_dir, su->clip_dir_abs, sizeof su->clip_dir_abs) != 0)
		return wl_err_set(err, WL_EIO, "cannot resolve the folders '%s' and '%s': %s", o->out_dir,
		                  o->clip_dir, strerror(errno));
	return batch_cal_digest(o->cal_path, su->cal_sha256, err);
}

/* The clips of this run (this shard), each with its job; warnings for clips
 * without a manifest row and rows without a clip. */
static wl_status prepare_jobs(runner *r, setup *su, const char *man_rel, wl_err *err)
{
	const wl_batch_opts *o = r->o;
	const wl_manifest *m = su->have_m ? &su->m : NULL;
	char path[PATH_MAX];
	size_t i, mine = 0;
	wl_status s;
	for (i = 0; i < su->cl.n; i++)
		mine += !(o->shard_count > 1 && (int)(i % (size_t)o->shard_count) != o->shard_index);
	if (!(r->jobs = calloc(mine ? mine : 1, sizeof *r->jobs)))
		return wl_err_set(err, WL_ENOMEM, "out of memory for %zu clips", mine);
	for (i = 0; i < su->cl.n; i++) {
		const wl_manifest_row *row = m ? find_row(su->idx, su->m.nrows, su->cl.rel[i]) : NULL;
		if (o->shard_count > 1 && (int)(i % (size_t)o->shard_count) != o->shard_index)
			continue;
		if (m && !row) {
			r->res->unlisted++;
			warn_manifest(r,
			              "%s: no row in the manifest '%s': processed with empty parameter cells",
			              su->cl.rel[i], o->manifest_path, man_rel ? man_rel : "");
		}
		s = prepare_job(r, m, row, su->cl.rel[i], &r->jobs[r->njobs], err);
		r->njobs++; /* what it allocated is freed by runner_release, also on failure */
		if (s)
			return s;
	}
	for (i = 0; m && i < m->nrows; i++) {
		if (m->rows[i].found)
			continue;
		r->res->missing++;
		snprintf(path, sizeof path, "%s' on line %ld", m->rows[i].clip, m->rows[i].line);
		warn_manifest(r, "clip '%s of the manifest '%s' is not under the clip folder: check the name",
		              path, m->path, man_rel ? man_rel : "");
	}
	return WL_OK;
}

/* A clip that needs no worker: its options failed (the message is the
 * result) or it is complete.  Returns 1 when the clip is settled here. */
static int settle_without_worker(runner *r, clipjob *j)
{
	int differ = 0;
	if (j->hash_err[0]) {
		wl_err e2;
		wl_err_clear(&e2);
		batch_mark(j->out_dir, &j->job, "", -1, "", 0, j->hash_err, 0, &e2);
		r->res->failed++;
		r->finished++;
		batch_journal(r->journal_fd, &r->journal_errno, "fail", j->rel, NULL, j->hash_err);
		emit(r, WL_BATCH_EV_FAIL, j->rel, j->hash_err);
		return 1;
	}
	if (wl_batch_input_digest(j->clip_path, j->digest, &j->size, NULL) != WL_OK)
		j->digest[0] = '\0'; /* unreadable: the worker says why */
	if (r->o->force ||
	    !batch_is_complete(j->out_dir, &j->job, j->digest, j->size, j->hash, outputs(r), &differ))
		return 0;
	if (differ) /* new parameter cells only: no need to redo the clip */
		batch_mark(j->out_dir, &j->job, j->digest, j->size, j->hash, 1, NULL, 0, NULL);
	r->res->skipped++;
	r->finished++;
	batch_journal(r->journal_fd, &r->journal_errno, "skip", j->rel, j->hash, NULL);
	emit(r, WL_BATCH_EV_SKIP, j->rel, NULL);
	return 1;
}

/* Runs the jobs, at most `jobs` workers at a time. */
static wl_status schedule(runner *r, int jobs, wl_err *err)
{
	size_t next = 0;
	wl_status s;
	while (next < r->njobs || r->running) {
		while (next < r->njobs && (int)r->running < jobs) {
			clipjob *j = &r->jobs[next++];
			if (!settle_without_worker(r, j) && (s = start_job(r, j, err)))
				return s;
		}
		pump(r);
	}
	return WL_OK;
}

static void runner_release(runner *r)
{
	/* on a set-up error while workers run, stop them: their clips are redone */
	for (size_t i = 0; i < r->njobs; i++)
		if (r->jobs[i].pid > 0) {
			kill(r->jobs[i].pid, SIGKILL);
			waitpid(r->jobs[i].pid, NULL, 0);
			close(r->jobs[i].fd);
		}
	for (size_t i = 0; i < r->njobs; i++) {
		free(r->jobs[i].names);
		free(r->jobs[i].values);
		free(r->jobs[i].wclip);
		free(r->jobs[i].wout);
		free(r->jobs[i].wcal);
	}
	free(r->jobs);
	if (r->journal_fd >= 0 && close(r->journal_fd) != 0 && !r->journal_errno)
		r->journal_errno = errno;
	r->journal_fd = -1;
}

wl_status wl_batch_plan(const wl_batch_opts *o, wl_batch_result *res, wl_err *err)
{
	setup su;
	wl_status s;
	char path[PATH_MAX];
	size_t i;
	memset(res, 0, sizeof *res);
	memset(&su, 0, sizeof su);
	wl_manifest_init(&su.m);
	snprintf(path, sizeof path, "%s/clips", o->out_dir);
	if ((s = wl_mkdirs(o->out_dir, err)) || (s = wl_mkdirs(path, err)) || (s = setup_sweep(o, &su, err)))
		goto out;
	res->clips = su.cl.n;
	for (i = 0; su.have_m && i < su.m.nrows; i++)
		res->missing += !su.m.rows[i].found;
	for (i = 0; su.have_m && i < su.cl.n; i++)
		res->unlisted += !find_row(su.idx, su.m.nrows, su.cl.rel[i]);
	s = batch_sweep_save(o, su.out_abs, su.have_m ? &su.m : NULL, &su.cl, su.cal_sha256, err);
out:
	setup_release(&su);
	return s;
}

wl_status wl_batch_run(const wl_batch_opts *o, wl_batch_result *res, wl_err *err)
{
	setup su;
	runner r;
	int jobs, cpus, locked = 0;
	batch_lock lock;
	wl_status s;
	char path[PATH_MAX], jpath[PATH_MAX] = "", owner[32], old_owner[32] = "", started[32];
	char *man_rel = NULL;

	memset(res, 0, sizeof *res);
	memset(&r, 0, sizeof r);
	memset(&su, 0, sizeof su);
	r.o = o;
	r.res = res;
	r.journal_fd = -1;
	wl_manifest_init(&su.m);
	if ((s = wl_mkdirs(o->out_dir, err)))
		return s;
	snprintf(path, sizeof path, "%s/clips", o->out_dir);
	if ((s = wl_mkdirs(path, err)) || (s = take_lock(o, &lock, err)))
		return s;
	locked = 1;
	batch_utc_now(started, sizeof started);
	/* OUT's top is shared with the other shards (each writes batch.json):
	 * name this run's temporaries and remove only those a killed run of the
	 * same shard left, never another shard's half-written file */
	snprintf(old_owner, sizeof old_owner, "%s", wl_afile_owner());
	if (o->shard_count > 1)
		snprintf(owner, sizeof owner, "shard%d", o->shard_index);
	else
		snprintf(owner, sizeof owner, "batch");
	wl_afile_set_owner(owner);
	batch_remove_stale_tmp(o->out_dir, owner);
	if ((s = setup_sweep(o, &su, err)))
		goto out;
	man_rel = batch_rel_to(su.out_abs, o->manifest_path);
	if (!(su.have_m && batch_manifest_has_cal(&su.m)) && (s = batch_check_cal(o, su.cal_sha256, err)))
		goto out;
	snprintf(r.out_abs, sizeof r.out_abs, "%s", su.out_abs);
	snprintf(r.clip_dir_abs, sizeof r.clip_dir_abs, "%s", su.clip_dir_abs);
	if (o->shard_count > 1)
		snprintf(jpath, sizeof jpath, "%s/journal-%d.log", o->out_dir, o->shard_index);
	else
		snprintf(jpath, sizeof jpath, "%s/journal.log", o->out_dir);
	r.journal_fd = open(jpath, O_WRONLY | O_APPEND | O_CREAT | O_CLOEXEC, 0644);
	if (r.journal_fd < 0)
		r.journal_errno = errno;
	r.t_start = batch_now_s();
	cpus = wl_batch_cpus();
	jobs = o->jobs > 0 ? o->jobs : cpus;
	if (jobs > MAX_JOBS)
		jobs = MAX_JOBS;
	r.threads = o->threads > 0 ? o->threads : (cpus / jobs > 1 ? cpus / jobs : 1);
	res->jobs = jobs;
	res->threads = r.threads;
	res->cpus = cpus;
	if ((s = prepare_jobs(&r, &su, man_rel, err)) ||
	    (s = batch_sweep_save(o, su.out_abs, su.have_m ? &su.m : NULL, &su.cl, su.cal_sha256, err)) ||
	    (s = batch_shard_record(o, su.cal_sha256, r.njobs, 0, started, err)))
		goto out;
	res->clips = r.njobs;
	if ((s = schedule(&r, jobs, err)))
		goto out;
	batch_shard_record(o, su.cal_sha256, r.njobs, 1, started, NULL);
	if (o->shard_count <= 1) {
		wl_batch_result mr;
		if ((s = wl_batch_merge(o->out_dir, &o->sweep, &mr, err)))
			goto out;
		res->runs = mr.runs;
	}
out:
	runner_release(&r);
	if (s == WL_OK && r.journal_errno)
		s = wl_err_set(
		        err, WL_EIO,
		        "cannot write '%s': %s: the clips' results are complete, their history is not%s",
		        jpath, strerror(r.journal_errno),
		        r.journal_errno == ENOSPC ? ": free some space and run again" : "");
	if (locked) {
		drop_lock(&lock);
		wl_afile_set_owner(old_owner);
	}
	free(man_rel);
	setup_release(&su);
	return s;
}
