/*
 * resume.c: what makes a batch resumable (see batch.h): the settings hash,
 * clip.json (the done marker, written last by the parent), the rule that
 * decides a clip folder is complete, the removal of a killed worker's
 * temporary files, and the append-only journal.
 */
#define _GNU_SOURCE
#include "batch/batch.h"

#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "batch/batch_priv.h"
#include "core/afile.h"
#include "core/csvio.h"
#include "core/jsonio.h"
#include "core/sha256.h"

double batch_now_s(void)
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

wl_status wl_batch_settings_hash(const char *settings, const char *const *files, char out[17], wl_err *err)
{
	unsigned long long h = 1469598103934665603ULL;
	if (settings)
		h = fnv(h, settings, strlen(settings) + 1);
	for (size_t i = 0; files && files[i]; i++) {
		char *data = NULL;
		size_t len = 0;
		wl_status s = wl_read_file(files[i], WL_JSON_MAX_BYTES, &data, &len, err);
		if (s)
			return s;
		h = fnv(h, data, len);
		h = fnv(h, "\n", 1);
		free(data);
	}
	snprintf(out, 17, "%016llx", h);
	return WL_OK;
}

/* ---- clip.json -------------------------------------------------------- */

void batch_utc_now(char *buf, size_t cap)
{
	time_t t = time(NULL);
	struct tm tm;
	gmtime_r(&t, &tm);
	strftime(buf, cap, "%Y-%m-%dT%H:%M:%SZ", &tm);
}

/* ---- the input's content key ----------------------------------------- */

#define SAMPLE_BLOCK 65536

static int read_at(int fd, unsigned char *buf, size_t n, off_t at)
{
	size_t got = 0;
	while (got < n) {
		ssize_t k = pread(fd, buf + got, n - got, at + (off_t)got);
		if (k < 0 && errno == EINTR)
			continue;
		if (k <= 0)
			return -1;
		got += (size_t)k;
	}
	return 0;
}

wl_status wl_batch_input_digest(const char *path, char hex[65], long long *size, wl_err *err)
{
	unsigned char *buf;
	struct stat st;
	wl_sha256 h;
	char num[32];
	int fd, bad = 0;
	hex[0] = '\0';
	*size = -1;
	fd = open(path, O_RDONLY | O_CLOEXEC);
	if (fd < 0 || fstat(fd, &st) != 0) {
		wl_status s = wl_err_set(err, WL_EIO, "cannot read '%s': %s", path, strerror(errno));
		if (fd >= 0)
			close(fd);
		return s;
	}
	buf = malloc(SAMPLE_BLOCK);
	if (!buf) {
		close(fd);
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
	}
	wl_sha256_init(&h);
	snprintf(num, sizeof num, "%lld\n", (long long)st.st_size);
	wl_sha256_update(&h, num, strlen(num));
	if (st.st_size <= 3 * SAMPLE_BLOCK) {
		off_t at;
		for (at = 0; !bad && at < st.st_size; at += SAMPLE_BLOCK) {
			size_t n = (size_t)(st.st_size - at < SAMPLE_BLOCK ? st.st_size - at : SAMPLE_BLOCK);
			bad = read_at(fd, buf, n, at);
			wl_sha256_update(&h, buf, n);
		}
	} else {
		const off_t at[3] = {0, (st.st_size / 2) & ~(off_t)(SAMPLE_BLOCK - 1),
		                     st.st_size - SAMPLE_BLOCK};
		int i;
		for (i = 0; !bad && i < 3; i++) {
			bad = read_at(fd, buf, SAMPLE_BLOCK, at[i]);
			wl_sha256_update(&h, buf, SAMPLE_BLOCK);
		}
	}
	free(buf);
	close(fd);
	if (bad)
		return wl_err_set(err, WL_EIO, "cannot read '%s': it changed or could not be read", path);
	wl_sha256_final(&h, hex);
	*size = (long long)st.st_size;
	return WL_OK;
}

wl_status batch_mark(const char *out_dir, const wl_batch_job *job, const char *digest, long long size,
                     const char *settings_hash, int ok, const char *error, double elapsed_s, wl_err *err)
{
	char path[PATH_MAX], buf[64];
	cJSON *root = cJSON_CreateObject(), *params;
	wl_status s;
	size_t i;
	if (!root)
		return wl_err_set(err, WL_ENOMEM, "out of memory writing clip.json");
	cJSON_AddStringToObject(root, "clip", job->clip_rel);
	cJSON_AddStringToObject(root, "status", ok ? "ok" : "failed");
	cJSON_AddStringToObject(root, "error", ok ? "" : (error ? error : "failed"));
	if (digest && digest[0] && size >= 0) {
		cJSON_AddNumberToObject(root, "input_size", (double)size);
		cJSON_AddStringToObject(root, "input_digest", digest);
	}
	cJSON_AddStringToObject(root, "settings_hash", settings_hash ? settings_hash : "");
	cJSON_AddStringToObject(root, "cal", job->cal_path ? job->cal_path : "");
	if (job->threads > 0)
		cJSON_AddNumberToObject(root, "threads", job->threads);
	params = cJSON_AddObjectToObject(root, "params");
	for (i = 0; params && i < job->nparams; i++)
		cJSON_AddStringToObject(params, job->param_names[i], job->param_values[i]);
	cJSON_AddNumberToObject(root, "elapsed_s", round(elapsed_s * 1000) / 1000);
	batch_utc_now(buf, sizeof buf);
	cJSON_AddStringToObject(root, "finished_utc", buf);
	snprintf(path, sizeof path, "%s/clip.json", out_dir);
	s = wl_json_save(path, root, err);
	cJSON_Delete(root);
	return s;
}

wl_status wl_batch_mark(const char *out_dir, const wl_batch_job *job, const char *settings_hash, int ok,
                        const char *error, double elapsed_s, wl_err *err)
{
	char digest[65];
	long long size;
	if (wl_batch_input_digest(job->clip_path, digest, &size, NULL) != WL_OK)
		digest[0] = '\0';
	return batch_mark(out_dir, job, digest, size, settings_hash, ok, error, elapsed_s, err);
}

/* Complete: clip.json says ok for this very input (its size and the digest
 * of its content) and these settings, and every output exists.  Times play
 * no part: a clip copied to node scratch without its times is still the
 * same clip. */
int batch_is_complete(const char *out_dir, const wl_batch_job *job, const char *digest, long long size,
                      const char *hash, const char *const *outputs, int *params_differ)
{
	char path[PATH_MAX];
	cJSON *root = NULL;
	const cJSON *params;
	struct stat o;
	int ok = 0;
	size_t i;
	*params_differ = 0;
	if (!digest || !digest[0] || size < 0)
		return 0;
	snprintf(path, sizeof path, "%s/clip.json", out_dir);
	if (wl_json_load(path, &root, NULL) != WL_OK)
		return 0;
	if (strcmp(wl_json_string_or(root, "status", ""), "ok") != 0 ||
	    wl_json_number_or(root, "input_size", -1) != (double)size ||
	    strcmp(wl_json_string_or(root, "input_digest", ""), digest) != 0 ||
	    strcmp(wl_json_string_or(root, "settings_hash", ""), hash) != 0)
		goto out;
	for (i = 0; outputs && outputs[i]; i++) {
		snprintf(path, sizeof path, "%s/%s", out_dir, outputs[i]);
		if (stat(path, &o) != 0)
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

/* Leftovers of a worker that was killed: temporary files of afile
 * (".<name>.tmp-..."); with an owner tag, only ".<name>.tmp-<owner>-...". */
void batch_remove_stale_tmp(const char *dir, const char *owner)
{
	DIR *d = opendir(dir);
	struct dirent *e;
	char path[PATH_MAX], pat[64];
	if (!d)
		return;
	snprintf(pat, sizeof pat, ".tmp-%s%s", owner ? owner : "", owner && owner[0] ? "-" : "");
	while ((e = readdir(d)))
		if (e->d_name[0] == '.' && strstr(e->d_name, pat)) {
			snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
			unlink(path);
		}
	closedir(d);
}

/* ---- the journal ------------------------------------------------------ */

void batch_journal(int fd, int *failed, const char *event, const char *clip, const char *hash,
                   const char *msg)
{
	char line[1024], ts[32];
	int n;
	if (fd < 0)
		return;
	batch_utc_now(ts, sizeof ts);
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
