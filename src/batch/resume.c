/*
 * resume.c: what makes a batch resumable (see batch.h): the settings hash,
 * clip.json (the done marker, written last by the parent), the rule that
 * decides a clip folder is complete, the removal of a killed worker's
 * temporary files, and the append-only journal.
 */
#define _GNU_SOURCE
#include "batch/batch.h"

#include <dirent.h>
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

void batch_utc_now(char *buf, size_t cap)
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
	batch_utc_now(buf, sizeof buf);
	cJSON_AddStringToObject(root, "finished_utc", buf);
	snprintf(path, sizeof path, "%s/clip.json", out_dir);
	s = wl_json_save(path, root, err);
	cJSON_Delete(root);
	return s;
}

/* Complete: clip.json says ok for this very input and these settings, and
 * every output exists and is no older than the input. */
int batch_is_complete(const char *out_dir, const wl_batch_job *job, const char *hash,
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
void batch_remove_stale_tmp(const char *dir)
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

void batch_journal(int fd, const char *event, const char *clip, const char *hash, const char *msg)
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
	/* one write() per line: O_APPEND puts it whole at the end */
	if (write(fd, line, (size_t)n) < 0) {
		/* the journal is history only; clip.json decides */
	}
}
