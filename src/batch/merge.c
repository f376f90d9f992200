/*
 * merge.c: rebuilds OUT/summary.csv, the sweep plots and OUT/report.html
 * from the clip folders alone (clip.json + summary.json), so that clips
 * processed by separate jobs (a cluster job array, shards, reruns) come
 * together in one table (see batch.h).
 *
 * summary.csv: clip, folder, status, error, the manifest's columns, then the
 * per-run row of formats/summary.h (id, segment, headline and the measures,
 * a [lo, hi] interval as <key>_lo and <key>_hi), then any keys of the
 * summaries that this version does not know, sorted by name.
 */
#define _GNU_SOURCE
#include "batch/batch.h"

#include <dirent.h>
#include <fcntl.h>
#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include "core/afile.h"
#include "core/csvio.h"
#include "core/jsonio.h"
#include "formats/summary.h"

typedef struct {
	size_t n, cap;
	char **k, **v;
} kvlist;

typedef struct {
	char *clip, *folder, *status, *error;
	kvlist params, meas;
} prow;

typedef struct {
	prow *r;
	size_t n, cap;
	int oom;
} prows;

static int kv_add(kvlist *l, const char *k, const char *v)
{
	if (l->n == l->cap) {
		size_t nc = l->cap ? 2 * l->cap : 16;
		char **nk = realloc(l->k, nc * sizeof *nk), **nv;
		if (!nk)
			return 0;
		l->k = nk;
		nv = realloc(l->v, nc * sizeof *nv);
		if (!nv)
			return 0;
		l->v = nv;
		l->cap = nc;
	}
	l->k[l->n] = strdup(k);
	l->v[l->n] = strdup(v ? v : "");
	if (!l->k[l->n] || !l->v[l->n]) {
		free(l->k[l->n]);
		free(l->v[l->n]);
		return 0;
	}
	l->n++;
	return 1;
}

static const char *kv_get(const kvlist *l, const char *k)
{
	size_t i;
	for (i = 0; i < l->n; i++)
		if (strcmp(l->k[i], k) == 0)
			return l->v[i];
	return NULL;
}

static void kv_free(kvlist *l)
{
	size_t i;
	for (i = 0; i < l->n; i++) {
		free(l->k[i]);
		free(l->v[i]);
	}
	free(l->k);
	free(l->v);
}

static prow *prow_new(prows *p, const char *clip, const char *folder, const char *status, const char *error)
{
	prow *r;
	if (p->n == p->cap) {
		size_t nc = p->cap ? 2 * p->cap : 32;
		prow *nr = realloc(p->r, nc * sizeof *nr);
		if (!nr) {
			p->oom = 1;
			return NULL;
		}
		p->r = nr;
		p->cap = nc;
	}
	r = &p->r[p->n];
	memset(r, 0, sizeof *r);
	r->clip = strdup(clip);
	r->folder = strdup(folder);
	r->status = strdup(status);
	r->error = strdup(error ? error : "");
	p->n++;
	if (!r->clip || !r->folder || !r->status || !r->error)
		p->oom = 1;
	return r;
}

static void prows_free(prows *p)
{
	size_t i;
	for (i = 0; i < p->n; i++) {
		free(p->r[i].clip);
		free(p->r[i].folder);
		free(p->r[i].status);
		free(p->r[i].error);
		kv_free(&p->r[i].params);
		kv_free(&p->r[i].meas);
	}
	free(p->r);
}

/* A run's cells: the columns of the per-run row, then the keys the reader
 * did not know. */
static int add_run_values(kvlist *l, const wl_summary_run *run)
{
	char cell[WL_SUMMARY_CELL];
	for (size_t c = 0; c < WL_SUMCOL_N; c++)
		if (!kv_add(l, wl_summary_col_name((wl_summary_col)c),
		            wl_summary_cell(run, (wl_summary_col)c, cell, sizeof cell)))
			return 0;
	for (size_t i = 0; i < run->nextra; i++)
		if (!kv_add(l, run->extra[i].key, run->extra[i].value))
			return 0;
	return 1;
}

static int cmp_name(const void *a, const void *b)
{
	return strcmp(*(const char *const *)a, *(const char *const *)b);
}

/* One clip folder: its rows (one per run, or one for a failure).  Returns
 * 0 when the folder has no done marker (the clip never finished). */
static int read_clip(prows *p, const char *out_dir, const char *name)
{
	char path[PATH_MAX], folder[PATH_MAX], msg[PATH_MAX + 300];
	cJSON *cj = NULL;
	const cJSON *params, *v;
	const char *clip, *status;
	wl_summary sum;
	int have_sum = 0;
	wl_err err;
	prow *first = NULL;
	size_t before = p->n;

	msg[0] = '\0';
	snprintf(folder, sizeof folder, "clips/%s", name);
	snprintf(path, sizeof path, "%s/%s/clip.json", out_dir, folder);
	wl_err_clear(&err);
	if (wl_json_load(path, &cj, &err) != WL_OK)
		return 0; /* no marker: the clip never finished; the caller lists it */
	clip = wl_json_string_or(cj, "clip", name);
	status = wl_json_string_or(cj, "status", "failed");
	params = cJSON_GetObjectItemCaseSensitive(cj, "params");
	wl_summary_init(&sum);
	if (strcmp(status, "ok") == 0) {
		snprintf(path, sizeof path, "%s/%s/summary.json", out_dir, folder);
		if (wl_summary_read(path, &sum, &err) != WL_OK) {
			status = "failed";
			snprintf(msg, sizeof msg, "%s", err.msg);
		} else {
			have_sum = 1;
		}
	}
	if (strcmp(status, "ok") == 0 && sum.nruns > 0) {
		struct stat st;
		snprintf(path, sizeof path, "%s/%s/path_m.png", out_dir, folder);
		if (stat(path, &st) != 0) {
			/* the table can do without the picture: a broken image shows the gap */
			wl_report_scene_buf *sb = calloc(1, sizeof *sb);
			const char *cal = wl_json_string_or(cj, "cal", "");
			char calp[PATH_MAX * 2];
			/* stored relative to OUT (older batches: as typed) */
			if (cal[0] == '/')
				snprintf(calp, sizeof calp, "%s", cal);
			else
				snprintf(calp, sizeof calp, "%s/%s", out_dir, cal);
			if (sb && cal[0])
				wl_report_scene_load(calp, sb, NULL);
			snprintf(path, sizeof path, "%s/%s", out_dir, folder);
			wl_report_clip_plots(path, sb ? &sb->scene : NULL, &err);
			wl_report_scene_release(sb);
			free(sb);
		}
		for (size_t i = 0; i < sum.nruns; i++) {
			prow *r = prow_new(p, clip, folder, "ok", NULL);
			if (!r || !add_run_values(&r->meas, &sum.runs[i]))
				p->oom = 1;
		}
	} else if (strcmp(status, "ok") == 0) {
		prow_new(p, clip, folder, "failed",
		         have_sum ? "no runs: nothing was tracked long enough to measure" : msg);
	} else {
		prow_new(p, clip, folder, "failed", msg[0] ? msg : wl_json_string_or(cj, "error", "failed"));
	}
	for (first = p->r + before; first < p->r + p->n; first++)
		cJSON_ArrayForEach(v, params) if (v->string && cJSON_IsString(v) &&
		                                  !kv_add(&first->params, v->string, v->valuestring)) p->oom =
		        1;
	cJSON_Delete(cj);
	wl_summary_release(&sum);
	return 1;
}

static int has(char **list, size_t n, const char *s)
{
	size_t i;
	for (i = 0; i < n; i++)
		if (strcmp(list[i], s) == 0)
			return 1;
	return 0;
}

/* Columns: manifest parameters in first-seen order, then measures. */
static wl_status build_table(prows *p, wl_report_runs *t, wl_err *err)
{
	size_t i, j, k, nextra = 0, cap = 64;
	char **extra = NULL;
	t->cols = calloc(cap, sizeof *t->cols);
	if (!t->cols)
		goto oom;
#define ADDCOL(name)                                                                                         \
	do {                                                                                                 \
		if (t->ncols == cap) {                                                                       \
			char **nc = realloc(t->cols, 2 * cap * sizeof *nc);                                  \
			if (!nc)                                                                             \
				goto oom;                                                                    \
			t->cols = nc;                                                                        \
			cap *= 2;                                                                            \
		}                                                                                            \
		if (!(t->cols[t->ncols] = strdup(name)))                                                     \
			goto oom;                                                                            \
		t->ncols++;                                                                                  \
	} while (0)
	for (i = 0; i < p->n; i++)
		for (j = 0; j < p->r[i].params.n; j++)
			if (!has(t->cols, t->ncols, p->r[i].params.k[j]))
				ADDCOL(p->r[i].params.k[j]);
	t->nparams = t->ncols;
	for (k = 0; k < WL_SUMCOL_N; k++)
		ADDCOL(wl_summary_col_name((wl_summary_col)k));
	for (i = 0; i < p->n; i++)
		for (j = 0; j < p->r[i].meas.n; j++) {
			const char *key = p->r[i].meas.k[j];
			if (has(t->cols + t->nparams, t->ncols - t->nparams, key) || has(extra, nextra, key))
				continue;
			{
				char **ne = realloc(extra, (nextra + 1) * sizeof *ne);
				if (!ne)
					goto oom;
				extra = ne;
				extra[nextra++] = p->r[i].meas.k[j];
			}
		}
	if (nextra) /* qsort wants a real array even for none */
		qsort(extra, nextra, sizeof *extra, cmp_name);
	for (i = 0; i < nextra; i++)
		ADDCOL(extra[i]);
#undef ADDCOL
	free(extra);
	extra = NULL;
	t->rows = calloc(p->n ? p->n : 1, sizeof *t->rows);
	if (!t->rows)
		goto oom;
	for (i = 0; i < p->n; i++) {
		wl_report_row *r = &t->rows[i];
		t->nrows++;
		r->clip = strdup(p->r[i].clip);
		r->folder = strdup(p->r[i].folder);
		r->status = strdup(p->r[i].status);
		r->error = strdup(p->r[i].error);
		r->cells = calloc(t->ncols, sizeof *r->cells);
		if (!r->clip || !r->folder || !r->status || !r->error || !r->cells)
			goto oom;
		for (j = 0; j < t->ncols; j++) {
			const char *v = j < t->nparams ? kv_get(&p->r[i].params, t->cols[j])
			                               : kv_get(&p->r[i].meas, t->cols[j]);
			if (!(r->cells[j] = strdup(v ? v : "")))
				goto oom;
		}
	}
	return WL_OK;
oom:
	free(extra);
	return wl_err_set(err, WL_ENOMEM, "out of memory building the run table");
}

static wl_status write_summary_csv(const wl_report_runs *t, const char *out_dir, wl_err *err)
{
	char path[PATH_MAX];
	wl_afile *af;
	wl_csv_writer w;
	size_t i, j;
	wl_status s;
	snprintf(path, sizeof path, "%s/summary.csv", out_dir);
	if ((s = wl_afile_open(path, &af, err)))
		return s;
	wl_csvw_init(&w, wl_afile_fp(af));
	wl_csvw_str(&w, "clip");
	wl_csvw_str(&w, "folder");
	wl_csvw_str(&w, "status");
	wl_csvw_str(&w, "error");
	for (j = 0; j < t->ncols; j++)
		wl_csvw_str(&w, t->cols[j]);
	wl_csvw_end(&w);
	for (i = 0; i < t->nrows; i++) {
		const wl_report_row *r = &t->rows[i];
		wl_csvw_str(&w, r->clip);
		wl_csvw_str(&w, r->folder);
		wl_csvw_str(&w, r->status);
		wl_csvw_str(&w, r->error);
		for (j = 0; j < t->ncols; j++)
			wl_csvw_str(&w, r->cells[j]);
		wl_csvw_end(&w);
	}
	return wl_afile_commit(af, err);
}

static int cmp_cstr(const void *a, const void *b)
{
	return strcmp(*(char *const *)a, *(char *const *)b);
}

/* A clip the sweep expects (batch.json's list): its folder name, path and
 * shard, and whether its folder had a done marker. */
typedef struct {
	char *name;
	const char *clip;
	int shard;
	int seen;
} expect;

static int cmp_expect(const void *a, const void *b)
{
	return strcmp(((const expect *)a)->name, ((const expect *)b)->name);
}

static expect *find_expect(expect *e, size_t n, const char *name)
{
	expect key;
	key.name = (char *)name;
	return n ? bsearch(&key, e, n, sizeof *e, cmp_expect) : NULL;
}

/* Takes the merge lock when it can (an unsharded batch merges under its
 * own lock and owner tag) and removes what a killed merge left. */
static int merge_lock(const char *out_dir, char *old_owner, size_t cap)
{
	char path[PATH_MAX];
	int fd;
	snprintf(old_owner, cap, "%s", wl_afile_owner());
	if (old_owner[0])
		return -1;
	wl_afile_set_owner("merge");
	snprintf(path, sizeof path, "%s/.lock-merge", out_dir);
	fd = open(path, O_RDWR | O_CREAT | O_CLOEXEC, 0644);
	if (fd >= 0 && flock(fd, LOCK_EX | LOCK_NB) == 0) {
		DIR *d = opendir(out_dir);
		struct dirent *e;
		while (d && (e = readdir(d)))
			if (e->d_name[0] == '.' && strstr(e->d_name, ".tmp-merge-")) {
				snprintf(path, sizeof path, "%s/%s", out_dir, e->d_name);
				unlink(path);
			}
		if (d)
			closedir(d);
	}
	return fd;
}

wl_status wl_batch_merge(const char *out_dir, const wl_report_sweep_opts *sweep, wl_batch_result *res,
                         wl_err *err)
{
	return wl_batch_merge_report(out_dir, sweep, NULL, NULL, res, err);
}

wl_status wl_batch_merge_report(const char *out_dir, const wl_report_sweep_opts *sweep,
                                wl_batch_problem_fn on_problem, void *ctx, wl_batch_result *res, wl_err *err)
{
	char path[PATH_MAX], msg[PATH_MAX * 2], old_owner[32] = "";
	prows p;
	wl_report_runs t;
	wl_report_sweep_opts so = {NULL, NULL, 0};
	cJSON *bj = NULL;
	char **names = NULL;
	DIR *d;
	struct dirent *e;
	expect *ex = NULL;
	size_t nn = 0, cap = 0, nex = 0, i;
	int written = 0, shards = 1, lock_fd;
	wl_status s = WL_OK;
	wl_batch_result dummy;

	if (!res)
		res = &dummy;
	memset(res, 0, sizeof *res);
	memset(&p, 0, sizeof p);
	wl_report_runs_init(&t);
	snprintf(path, sizeof path, "%s/clips", out_dir);
	d = opendir(path);
	if (!d)
		return wl_err_set(err, WL_EIO, "'%s' has no clips folder: is it the -o folder of a batch?",
		                  out_dir);
	lock_fd = merge_lock(out_dir, old_owner, sizeof old_owner);
	while ((e = readdir(d))) {
		if (e->d_name[0] == '.')
			continue;
		if (nn == cap) {
			size_t nc = cap ? 2 * cap : 256;
			char **nn2 = realloc(names, nc * sizeof *nn2);
			if (!nn2)
				break;
			names = nn2;
			cap = nc;
		}
		if (!(names[nn] = strdup(e->d_name)))
			break;
		nn++;
	}
	closedir(d);
	if (e) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory listing '%s'", path);
		goto out;
	}
	if (nn)
		qsort(names, nn, sizeof *names, cmp_cstr);
	/* the sweep: every clip it holds, even of shards that never ran */
	snprintf(path, sizeof path, "%s/batch.json", out_dir);
	if (wl_json_load(path, &bj, NULL) == WL_OK) {
		const cJSON *clips = cJSON_GetObjectItemCaseSensitive(bj, "clips"), *c;
		const char *x = wl_json_string_or(bj, "x_col", ""),
		           *g = wl_json_string_or(bj, "group_col", "");
		int k = 0;
		so.x_col = x[0] ? x : NULL;
		so.group_col = g[0] ? g : NULL;
		so.body_diameter_m = wl_json_number_or(bj, "body_diameter_m", 0);
		shards = (int)wl_json_number_or(bj, "shard_count", 1);
		if (shards < 1)
			shards = 1;
		ex = calloc((size_t)(cJSON_GetArraySize(clips) > 0 ? cJSON_GetArraySize(clips) : 1),
		            sizeof *ex);
		if (!ex) {
			s = wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
			goto out;
		}
		cJSON_ArrayForEach(c, clips)
		{
			char name[PATH_MAX];
			if (!cJSON_IsString(c))
				continue;
			ex[nex].clip = c->valuestring;
			ex[nex].shard = k++ % shards;
			if (!(ex[nex].name = strdup(wl_batch_clip_name(c->valuestring, name, sizeof name)))) {
				s = wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
				goto out;
			}
			nex++;
		}
		qsort(ex, nex, sizeof *ex, cmp_expect);
	}
	for (i = 0; i < nn && !p.oom; i++) {
		expect *x = find_expect(ex, nex, names[i]);
		if (read_clip(&p, out_dir, names[i])) {
			if (x)
				x->seen = 1;
			continue;
		}
		if (x)
			continue; /* listed below with its shard */
		/* a folder without a marker: its clip was started and never finished */
		snprintf(path, sizeof path, "clips/%s", names[i]);
		snprintf(msg, sizeof msg,
		         "%s: not finished (the run that started it was interrupted): run the batch or its "
		         "shard again",
		         path);
		prow_new(&p, names[i], path, "missing", msg);
	}
	for (i = 0; i < nex && !p.oom; i++) {
		if (ex[i].seen)
			continue;
		snprintf(path, sizeof path, "clips/%s", ex[i].name);
		if (shards > 1)
			snprintf(msg, sizeof msg,
			         "%s: no result in %s/ (shard %d/%d did not run or did not finish it): run "
			         "that "
			         "shard again (batch ... --shard %d/%d), then merge",
			         ex[i].clip, path, ex[i].shard, shards, ex[i].shard, shards);
		else
			snprintf(msg, sizeof msg,
			         "%s: no result in %s/ (the batch did not run or did not finish it): run the "
			         "batch again, then merge",
			         ex[i].clip, path);
		prow_new(&p, ex[i].clip, path, "missing", msg);
	}
	if (bj) {
		const cJSON *m, *miss = cJSON_GetObjectItemCaseSensitive(bj, "missing");
		cJSON_ArrayForEach(m, miss)
		{
			if (!prow_new(&p, wl_json_string_or(m, "clip", "?"), "", "missing",
			              wl_json_string_or(m, "error", "")))
				break;
		}
	}
	/* what the caller gives wins; what it leaves out comes from batch.json */
	if (sweep && sweep->x_col)
		so.x_col = sweep->x_col;
	if (sweep && sweep->group_col)
		so.group_col = sweep->group_col;
	if (sweep && sweep->body_diameter_m > 0)
		so.body_diameter_m = sweep->body_diameter_m;
	if (p.oom) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory reading the clip folders of '%s'", out_dir);
		goto out;
	}
	if ((s = build_table(&p, &t, err)) || (s = write_summary_csv(&t, out_dir, err)))
		goto out;
	for (i = 0; i < t.nrows; i++) {
		const wl_report_row *r = &t.rows[i];
		if (strcmp(r->status, "ok") == 0) {
			res->runs++;
			continue;
		}
		if (strcmp(r->status, "missing") == 0)
			res->missing++;
		else
			res->failed++;
		if (on_problem)
			on_problem(r->clip, r->status, r->error, ctx);
	}
	res->clips = nn;
	/* a bad sweep column is an error, but the table is still worth a page */
	s = wl_report_sweep_plots(&t, &so, out_dir, &written, err);
	{
		wl_err herr;
		wl_status hs = wl_report_html(&t, out_dir, "wakeline batch report", written, s ? &herr : err);
		if (!s && hs)
			s = hs;
	}
out:
	for (i = 0; i < nn; i++)
		free(names[i]);
	free(names);
	for (i = 0; i < nex; i++)
		free(ex[i].name);
	free(ex);
	cJSON_Delete(bj);
	prows_free(&p);
	wl_report_runs_release(&t);
	if (lock_fd != -1) {
		if (lock_fd >= 0)
			close(lock_fd);
		wl_afile_set_owner(old_owner);
	}
	return s;
}
