/*
 * status.c: where a sweep stands, from what its runs leave in OUT (see
 * batch.h, wl_batch_status): batch.json's clip list, each clip folder's
 * done marker, the journals' last event per clip and the shards' locks.
 * Reads only; safe while shards run.
 */
#define _GNU_SOURCE
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include "batch/batch_priv.h"
#include "core/afile.h"
#include "core/jsonio.h"

const char *wl_batch_state_name(wl_batch_state s)
{
	switch (s) {
	case WL_BATCH_DONE:
		return "done";
	case WL_BATCH_FAILED:
		return "failed";
	case WL_BATCH_RUNNING:
		return "running";
	case WL_BATCH_INTERRUPTED:
		return "interrupted";
	case WL_BATCH_NOT_STARTED:
		return "not started";
	default:
		return "missing";
	}
}

void wl_batch_status_release(wl_batch_status_report *st)
{
	size_t i;
	for (i = 0; i < st->n; i++) {
		free(st->e[i].clip);
		free(st->e[i].msg);
	}
	free(st->e);
	free(st->shard_running);
	memset(st, 0, sizeof *st);
}

/* 1 when a run holds shard k's lock (flock or lock directory). */
static int shard_locked(const char *out_dir, int k)
{
	char path[PATH_MAX];
	struct stat sb;
	int fd, held = 0;
	snprintf(path, sizeof path, "%s/.lock-%d.d", out_dir, k);
	if (stat(path, &sb) == 0 && S_ISDIR(sb.st_mode))
		return 1;
	snprintf(path, sizeof path, "%s/.lock-%d", out_dir, k);
	fd = open(path, O_RDONLY | O_CLOEXEC);
	if (fd < 0)
		return 0;
	if (flock(fd, LOCK_SH | LOCK_NB) != 0)
		held = errno == EWOULDBLOCK;
	close(fd); /* releases the shared lock if we got it */
	return held;
}

static int cmp_idx(const void *a, const void *b, void *ctx)
{
	const wl_batch_status_report *st = ctx;
	return strcmp(st->e[*(const size_t *)a].clip, st->e[*(const size_t *)b].clip);
}

/* The last event of each clip in one journal: "start" without a later
 * "done", "fail" or "skip" means the clip was started and has not ended. */
static void read_journal(const char *path, wl_batch_status_report *st, const size_t *idx, char *started)
{
	FILE *fp = fopen(path, "r");
	char line[2048];
	if (!fp)
		return;
	while (fgets(line, sizeof line, fp)) {
		char *f[5], *p = line;
		size_t lo = 0, hi = st->n;
		int k;
		line[strcspn(line, "\n")] = '\0';
		for (k = 0; k < 5; k++) {
			f[k] = p;
			p = p ? strchr(p, '\t') : NULL;
			if (p)
				*p++ = '\0';
		}
		if (!f[1] || !f[2] || !f[2][0])
			continue;
		while (lo < hi) { /* the clip among the sweep's, by name */
			size_t mid = lo + (hi - lo) / 2;
			int c = strcmp(st->e[idx[mid]].clip, f[2]);
			if (c == 0) {
				lo = mid;
				break;
			}
			if (c < 0)
				lo = mid + 1;
			else
				hi = mid;
		}
		if (lo >= st->n || strcmp(st->e[idx[lo]].clip, f[2]) != 0)
			continue;
		if (strcmp(f[1], "start") == 0)
			started[idx[lo]] = 1;
		else if (strcmp(f[1], "done") == 0 || strcmp(f[1], "fail") == 0 || strcmp(f[1], "skip") == 0)
			started[idx[lo]] = 0;
	}
	fclose(fp);
}

wl_status wl_batch_status(const char *out_dir, wl_batch_status_report *st, wl_err *err)
{
	char path[PATH_MAX], name[PATH_MAX];
	cJSON *bj = NULL, *cj;
	const cJSON *clips, *c, *miss;
	size_t n, i, *idx = NULL;
	char *started = NULL;
	int k;
	wl_status s = WL_OK;
	DIR *d;
	struct dirent *de;

	memset(st, 0, sizeof *st);
	snprintf(path, sizeof path, "%s/batch.json", out_dir);
	if ((s = wl_json_load(path, &bj, err)))
		return s;
	clips = cJSON_GetObjectItemCaseSensitive(bj, "clips");
	miss = cJSON_GetObjectItemCaseSensitive(bj, "missing");
	if (!cJSON_IsArray(clips)) {
		cJSON_Delete(bj);
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: no clip list: it was written by an older wakeline; run the batch "
		                  "(or one shard) once with this version",
		                  path);
	}
	st->shard_count = (int)wl_json_number_or(bj, "shard_count", 1);
	if (st->shard_count < 1)
		st->shard_count = 1;
	n = (size_t)cJSON_GetArraySize(clips) + (size_t)cJSON_GetArraySize(miss);
	st->e = calloc(n ? n : 1, sizeof *st->e);
	idx = calloc(n ? n : 1, sizeof *idx);
	started = calloc(n ? n : 1, 1);
	st->shard_running = calloc((size_t)st->shard_count, sizeof *st->shard_running);
	if (!st->e || !idx || !started || !st->shard_running) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
		goto out;
	}
	for (k = 0; k < st->shard_count; k++)
		st->shard_running[k] = shard_locked(out_dir, st->shard_count > 1 ? k : 0);
	cJSON_ArrayForEach(c, clips)
	{
		wl_batch_clip_status *e = &st->e[st->n];
		if (!cJSON_IsString(c))
			continue;
		e->shard = (int)(st->n % (size_t)st->shard_count);
		e->state = WL_BATCH_NOT_STARTED;
		if (!(e->clip = strdup(c->valuestring))) {
			s = wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
			goto out;
		}
		idx[st->n] = st->n;
		st->n++;
	}
	qsort_r(idx, st->n, sizeof *idx, cmp_idx, st);
	snprintf(path, sizeof path, "%s/journal.log", out_dir);
	read_journal(path, st, idx, started);
	d = opendir(out_dir);
	while (d && (de = readdir(d))) {
		int kk;
		char tail;
		if (sscanf(de->d_name, "journal-%d.lo%c", &kk, &tail) == 2 && tail == 'g') {
			snprintf(path, sizeof path, "%s/%s", out_dir, de->d_name);
			read_journal(path, st, idx, started);
		}
	}
	if (d)
		closedir(d);
	for (i = 0; i < st->n; i++) {
		wl_batch_clip_status *e = &st->e[i];
		snprintf(path, sizeof path, "%s/clips/%s/clip.json", out_dir,
		         wl_batch_clip_name(e->clip, name, sizeof name));
		cj = NULL;
		if (wl_json_load(path, &cj, NULL) == WL_OK) {
			int ok = strcmp(wl_json_string_or(cj, "status", ""), "ok") == 0;
			e->state = ok ? WL_BATCH_DONE : WL_BATCH_FAILED;
			if (!ok && !(e->msg = strdup(wl_json_string_or(cj, "error", "failed"))))
				s = wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
			cJSON_Delete(cj);
			if (s)
				goto out;
		}
		/* a done marker from an earlier run and a new start: it is being redone */
		if (started[i])
			e->state = st->shard_running[e->shard] ? WL_BATCH_RUNNING : WL_BATCH_INTERRUPTED;
		st->count[e->state]++;
	}
	cJSON_ArrayForEach(c, miss)
	{
		wl_batch_clip_status *e = &st->e[st->n];
		e->state = WL_BATCH_MISSING;
		e->shard = -1;
		e->clip = strdup(wl_json_string_or(c, "clip", "?"));
		e->msg = strdup(wl_json_string_or(c, "error", ""));
		st->n++;
		st->count[WL_BATCH_MISSING]++;
		if (!e->clip || !e->msg) {
			s = wl_err_set(err, WL_ENOMEM, "out of memory reading batch.json");
			goto out;
		}
	}
out:
	free(idx);
	free(started);
	cJSON_Delete(bj);
	if (s)
		wl_batch_status_release(st);
	return s;
}
