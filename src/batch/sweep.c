/*
 * sweep.c: what a batch records about the whole sweep at the top of OUT,
 * for merge, `batch --status` and the other shards:
 *
 *   OUT/batch.json      the sweep: clip folder, manifest and calibration
 *                       (relative to OUT), the calibration's SHA-256, the
 *                       sweep options, the shard count and every clip of
 *                       the sweep in shard order (clip i belongs to shard
 *                       i % shard_count), and the manifest rows that name
 *                       missing clips.  Written by every run (the same
 *                       content from every shard of one sweep) and by
 *                       `batch --slurm` before it submits.
 *   OUT/shard-K.json    one shard's run: host, pid, start and end time,
 *                       its calibration's SHA-256 and clip count.
 *
 * It also refuses a shard whose calibration differs from the others'.
 */
#define _GNU_SOURCE
#include <dirent.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "batch/batch_priv.h"
#include "core/afile.h"
#include "core/jsonio.h"
#include "core/sha256.h"

int batch_manifest_has_cal(const wl_manifest *m)
{
	size_t i;
	for (i = 0; m && i < m->ncols; i++)
		if (strcmp(m->cols[i], "cal") == 0)
			return 1;
	return 0;
}

wl_status batch_cal_digest(const char *cal_path, char hex[65], wl_err *err)
{
	uint64_t n;
	hex[0] = '\0';
	if (!cal_path || !cal_path[0])
		return WL_OK;
	return wl_sha256_file(cal_path, hex, &n, err);
}

wl_status batch_sweep_save(const wl_batch_opts *o, const char *out_abs, const wl_manifest *m,
                           const wl_cliplist *cl, const char *cal_sha256, wl_err *err)
{
	char path[PATH_MAX], msg[PATH_MAX * 3];
	char *cdir = batch_rel_to(out_abs, o->clip_dir), *man = batch_rel_to(out_abs, o->manifest_path),
	     *cal = batch_rel_to(out_abs, o->cal_path);
	cJSON *root = cJSON_CreateObject(), *miss, *clips;
	wl_status s;
	size_t i;
	if (!root || !cdir || !man || !cal) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory writing batch.json");
		goto out;
	}
	cJSON_AddStringToObject(root, "format", "wakeline batch");
	cJSON_AddNumberToObject(root, "format_version", 2);
	cJSON_AddStringToObject(root, "clip_dir", cdir);
	cJSON_AddStringToObject(root, "manifest", man);
	cJSON_AddStringToObject(root, "cal", cal);
	cJSON_AddStringToObject(root, "cal_sha256", cal_sha256 ? cal_sha256 : "");
	cJSON_AddBoolToObject(root, "cal_per_clip", batch_manifest_has_cal(m));
	cJSON_AddStringToObject(root, "x_col", o->sweep.x_col ? o->sweep.x_col : "");
	cJSON_AddStringToObject(root, "group_col", o->sweep.group_col ? o->sweep.group_col : "");
	cJSON_AddNumberToObject(root, "body_diameter_m", o->sweep.body_diameter_m);
	cJSON_AddNumberToObject(root, "shard_count", o->shard_count > 1 ? o->shard_count : 1);
	clips = cJSON_AddArrayToObject(root, "clips");
	for (i = 0; clips && cl && i < cl->n; i++) {
		cJSON *e = cJSON_CreateString(cl->rel[i]);
		if (!e || !cJSON_AddItemToArray(clips, e)) {
			cJSON_Delete(e);
			s = wl_err_set(err, WL_ENOMEM, "out of memory writing batch.json");
			goto out;
		}
	}
	miss = cJSON_AddArrayToObject(root, "missing");
	for (i = 0; m && miss && i < m->nrows; i++) {
		cJSON *e;
		if (m->rows[i].found)
			continue;
		e = cJSON_CreateObject();
		if (!e)
			break;
		snprintf(msg, sizeof msg,
		         "%s:%ld: clip '%s' is not under '%s': check the name in the manifest", man,
		         m->rows[i].line, m->rows[i].clip, cdir);
		cJSON_AddStringToObject(e, "clip", m->rows[i].clip);
		cJSON_AddStringToObject(e, "error", msg);
		cJSON_AddItemToArray(miss, e);
	}
	snprintf(path, sizeof path, "%s/batch.json", o->out_dir);
	s = wl_json_save(path, root, err);
out:
	cJSON_Delete(root);
	free(cdir);
	free(man);
	free(cal);
	return s;
}

wl_status batch_shard_record(const wl_batch_opts *o, const char *cal_sha256, size_t nclips, int finished,
                             const char *started_utc, wl_err *err)
{
	char path[PATH_MAX], host[256] = "", now[32];
	cJSON *root = cJSON_CreateObject();
	wl_status s;
	if (!root)
		return wl_err_set(err, WL_ENOMEM, "out of memory writing the shard record");
	gethostname(host, sizeof host - 1);
	batch_utc_now(now, sizeof now);
	cJSON_AddNumberToObject(root, "shard", o->shard_count > 1 ? o->shard_index : 0);
	cJSON_AddNumberToObject(root, "shard_count", o->shard_count > 1 ? o->shard_count : 1);
	cJSON_AddStringToObject(root, "host", host);
	cJSON_AddNumberToObject(root, "pid", (double)getpid());
	cJSON_AddStringToObject(root, "started_utc", started_utc);
	cJSON_AddStringToObject(root, "finished_utc", finished ? now : "");
	cJSON_AddStringToObject(root, "cal_sha256", cal_sha256 ? cal_sha256 : "");
	cJSON_AddNumberToObject(root, "clips", (double)nclips);
	snprintf(path, sizeof path, "%s/shard-%d.json", o->out_dir, o->shard_count > 1 ? o->shard_index : 0);
	s = wl_json_save(path, root, err);
	cJSON_Delete(root);
	return s;
}

/* The shards of one sweep must use one calibration: a shard given another
 * CAL.json would give a table whose rows are not comparable, without a
 * word.  Compares with batch.json (the sweep as submitted or as the first
 * shard wrote it) and with every other shard's record. */
wl_status batch_check_cal(const wl_batch_opts *o, const char *cal_sha256, wl_err *err)
{
	char path[PATH_MAX];
	cJSON *j = NULL;
	DIR *d;
	struct dirent *e;
	wl_status s = WL_OK;
	if (o->shard_count <= 1 || o->force || !cal_sha256 || !cal_sha256[0])
		return WL_OK;
	snprintf(path, sizeof path, "%s/batch.json", o->out_dir);
	if (wl_json_load(path, &j, NULL) == WL_OK) {
		const char *other = wl_json_string_or(j, "cal_sha256", "");
		if ((int)wl_json_number_or(j, "shard_count", 0) == o->shard_count && other[0] &&
		    !cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(j, "cal_per_clip")) &&
		    strcmp(other, cal_sha256) != 0)
			s = wl_err_set(
			        err, WL_EINVAL,
			        "shard %d/%d: the calibration '%s' (sha256 %.12s...) differs from the one "
			        "this sweep in '%s' was started with (%s, sha256 %.12s..., see batch.json): "
			        "give every shard the same CAL.json, assign calibrations per clip with a "
			        "'cal' column in the manifest, or redo the whole sweep with the new one "
			        "(--force on every shard, or a new -o)",
			        o->shard_index, o->shard_count, o->cal_path, cal_sha256, o->out_dir,
			        wl_json_string_or(j, "cal", "?"), other);
		cJSON_Delete(j);
		j = NULL;
		if (s)
			return s;
	}
	d = opendir(o->out_dir);
	while (d && !s && (e = readdir(d))) {
		int k = -1;
		char tail;
		const char *other;
		if (sscanf(e->d_name, "shard-%d.jso%c", &k, &tail) != 2 || tail != 'n' || k == o->shard_index)
			continue;
		snprintf(path, sizeof path, "%s/%s", o->out_dir, e->d_name);
		if (wl_json_load(path, &j, NULL) != WL_OK)
			continue;
		other = wl_json_string_or(j, "cal_sha256", "");
		if ((int)wl_json_number_or(j, "shard_count", 0) == o->shard_count && other[0] &&
		    strcmp(other, cal_sha256) != 0)
			s = wl_err_set(
			        err, WL_EINVAL,
			        "shard %d/%d: the calibration '%s' (sha256 %.12s...) differs from the one "
			        "shard %d used (sha256 %.12s..., see %s): give every shard the same "
			        "CAL.json, assign calibrations per clip with a 'cal' column in the "
			        "manifest, or redo the whole sweep with the new one (--force on every "
			        "shard, or a new -o)",
			        o->shard_index, o->shard_count, o->cal_path, cal_sha256, k, other, e->d_name);
		cJSON_Delete(j);
		j = NULL;
	}
	if (d)
		closedir(d);
	return s;
}
