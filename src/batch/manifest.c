/*
 * manifest.c: the sweep's manifest CSV (one row per clip, free parameter
 * columns) and the discovery of clips under a folder (see batch.h).
 */
#define _XOPEN_SOURCE 700
#include "batch/batch.h"

#include <dirent.h>
#include <errno.h>
#include <limits.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>

#include "core/csvio.h"

void wl_manifest_init(wl_manifest *m)
{
	memset(m, 0, sizeof *m);
	m->c_clip = m->c_cal = m->c_plane = -1;
}

void wl_manifest_release(wl_manifest *m)
{
	size_t i, j;
	for (i = 0; i < m->nrows; i++) {
		free(m->rows[i].clip);
		for (j = 0; m->rows[i].values && j < m->ncols; j++)
			free(m->rows[i].values[j]);
		free(m->rows[i].values);
	}
	for (i = 0; i < m->ncols; i++)
		free(m->cols[i]);
	free(m->cols);
	free(m->rows);
	free(m->path);
	wl_manifest_init(m);
}

static char *trimdup(const char *s)
{
	size_t n;
	while (*s == ' ' || *s == '\t')
		s++;
	n = strlen(s);
	while (n && (s[n - 1] == ' ' || s[n - 1] == '\t' || s[n - 1] == '\r'))
		n--;
	return strndup(s, n);
}

static const char *strip_dot(const char *s)
{
	while (s[0] == '.' && s[1] == '/')
		s += 2;
	return s;
}

typedef struct {
	wl_manifest *m;
	size_t cap;
} mctx;

static wl_status on_header(const wl_csv_row *row, wl_manifest *m, wl_err *err)
{
	size_t i, j;
	m->cols = calloc(row->nfields ? row->nfields : 1, sizeof *m->cols);
	if (!m->cols)
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
	for (i = 0; i < row->nfields; i++) {
		m->cols[i] = trimdup(row->fields[i]);
		if (!m->cols[i])
			return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
		m->ncols++;
		if (!m->cols[i][0])
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: column %zu has no name: name every column", row->path,
			                  row->line, i + 1);
		for (j = 0; j < i; j++)
			if (strcmp(m->cols[j], m->cols[i]) == 0)
				return wl_err_set(err, WL_EFORMAT,
				                  "%s:%ld: column '%s' appears twice: rename one", row->path,
				                  row->line, m->cols[i]);
	}
	m->c_clip = wl_csv_col(row, "clip");
	m->c_cal = wl_csv_col(row, "cal");
	m->c_plane = wl_csv_col(row, "plane_height_m");
	if (m->c_clip < 0)
		return wl_err_set(
		        err, WL_EFORMAT,
		        "%s:%ld: no 'clip' column: the first line must name the columns, one of them 'clip'",
		        row->path, row->line);
	return WL_OK;
}

static wl_status on_mrow(const wl_csv_row *row, void *ctx, wl_err *err)
{
	mctx *c = ctx;
	wl_manifest *m = c->m;
	wl_manifest_row *r;
	const wl_manifest_row *prev;
	size_t i;
	double h;

	if (row->index == 0)
		return on_header(row, m, err);
	if (row->nfields != m->ncols)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: row has %zu cells but the header has %zu: fix the row", row->path,
		                  row->line, row->nfields, m->ncols);
	{
		char *clip = trimdup(strip_dot(row->fields[m->c_clip]));
		if (!clip)
			return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
		if (!clip[0]) {
			free(clip);
			return wl_err_set(err, WL_EFORMAT, "%s:%ld: empty 'clip' cell: name the clip file",
			                  row->path, row->line);
		}
		prev = wl_manifest_find(m, clip);
		if (prev) {
			long pl = prev->line;
			wl_err_set(err, WL_EFORMAT,
			           "%s:%ld: clip '%s' is listed again (first on line %ld): keep one row per "
			           "clip",
			           row->path, row->line, clip, pl);
			free(clip);
			return WL_EFORMAT;
		}
		if (m->c_plane >= 0 && !wl_csv_empty(row, m->c_plane) &&
		    wl_csv_get_double(row, m->c_plane, "plane_height_m", &h, err)) {
			free(clip);
			return err ? err->code : WL_EFORMAT;
		}
		if (m->nrows == c->cap) {
			size_t nc = c->cap ? 2 * c->cap : 16;
			wl_manifest_row *nr = realloc(m->rows, nc * sizeof *nr);
			if (!nr) {
				free(clip);
				return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
			}
			m->rows = nr;
			c->cap = nc;
		}
		r = &m->rows[m->nrows++];
		memset(r, 0, sizeof *r);
		r->clip = clip;
		r->line = row->line;
	}
	r->values = calloc(m->ncols, sizeof *r->values);
	if (!r->values)
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
	for (i = 0; i < m->ncols; i++) {
		r->values[i] = trimdup(row->fields[i]);
		if (!r->values[i])
			return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", row->path);
	}
	return WL_OK;
}

wl_status wl_manifest_load(const char *path, wl_manifest *m, wl_err *err)
{
	mctx c = {m, 0};
	wl_status s;
	wl_manifest_init(m);
	m->path = strdup(path);
	if (!m->path)
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
	s = wl_csv_read(path, on_mrow, &c, err);
	if (!s && m->ncols == 0)
		s = wl_err_set(
		        err, WL_EFORMAT,
		        "%s:1: empty manifest: the first line must name the columns, one of them 'clip'",
		        path);
	if (s)
		wl_manifest_release(m);
	return s;
}

const wl_manifest_row *wl_manifest_find(const wl_manifest *m, const char *clip)
{
	size_t i;
	for (i = 0; m && i < m->nrows; i++)
		if (strcmp(m->rows[i].clip, clip) == 0)
			return &m->rows[i];
	return NULL;
}

/* ---- discovery --------------------------------------------------------- */

void wl_cliplist_release(wl_cliplist *l)
{
	size_t i;
	for (i = 0; i < l->n; i++)
		free(l->rel[i]);
	free(l->rel);
	l->rel = NULL;
	l->n = 0;
}

int wl_batch_is_video(const char *name)
{
	static const char *const ext[] = {"mp4", "mov", "m4v", "avi", "mkv", "webm", NULL};
	const char *dot = strrchr(name, '.');
	size_t i;
	if (!dot || dot == name)
		return 0;
	for (i = 0; ext[i]; i++)
		if (strcasecmp(dot + 1, ext[i]) == 0)
			return 1;
	return 0;
}

typedef struct {
	wl_cliplist *l;
	size_t cap;
	char skip_real[PATH_MAX];
	int have_skip;
} dctx;

static wl_status add_clip(dctx *c, const char *rel, wl_err *err)
{
	if (c->l->n == c->cap) {
		size_t nc = c->cap ? 2 * c->cap : 64;
		char **nr = realloc(c->l->rel, nc * sizeof *nr);
		if (!nr)
			return wl_err_set(err, WL_ENOMEM, "out of memory listing clips");
		c->l->rel = nr;
		c->cap = nc;
	}
	c->l->rel[c->l->n] = strdup(rel);
	if (!c->l->rel[c->l->n])
		return wl_err_set(err, WL_ENOMEM, "out of memory listing clips");
	c->l->n++;
	return WL_OK;
}

static wl_status walk(dctx *c, const char *root, const char *rel, int depth, wl_err *err)
{
	char dir[PATH_MAX], sub[PATH_MAX], full[PATH_MAX], real[PATH_MAX];
	DIR *d;
	struct dirent *e;
	wl_status s = WL_OK;

	snprintf(dir, sizeof dir, "%s%s%s", root, rel[0] ? "/" : "", rel);
	if (c->have_skip && realpath(dir, real) && strcmp(real, c->skip_real) == 0)
		return WL_OK;
	d = opendir(dir);
	if (!d)
		return wl_err_set(err, WL_EIO, "cannot read the folder '%s': %s: check the path", dir,
		                  strerror(errno));
	while (!s && (e = readdir(d))) {
		struct stat st;
		if (e->d_name[0] == '.')
			continue;
		snprintf(sub, sizeof sub, "%s%s%s", rel, rel[0] ? "/" : "", e->d_name);
		snprintf(full, sizeof full, "%s/%s", root, sub);
		if (stat(full, &st) != 0)
			continue;
		if (S_ISDIR(st.st_mode)) {
			if (depth < 16)
				s = walk(c, root, sub, depth + 1, err);
		} else if (S_ISREG(st.st_mode) && wl_batch_is_video(e->d_name)) {
			s = add_clip(c, sub, err);
		}
	}
	closedir(d);
	return s;
}

static int cmp_rel(const void *a, const void *b)
{
	return strcmp(*(const char *const *)a, *(const char *const *)b);
}

wl_status wl_batch_discover(const char *dir, const char *skip_dir, wl_cliplist *out, wl_err *err)
{
	dctx c;
	wl_status s;
	memset(&c, 0, sizeof c);
	memset(out, 0, sizeof *out);
	c.l = out;
	if (skip_dir && realpath(skip_dir, c.skip_real))
		c.have_skip = 1;
	s = walk(&c, dir, "", 0, err);
	if (s) {
		wl_cliplist_release(out);
		return s;
	}
	qsort(out->rel, out->n, sizeof *out->rel, cmp_rel);
	return WL_OK;
}

char *wl_batch_clip_name(const char *rel, char *buf, size_t cap)
{
	size_t o = 0;
	const char *dot = strrchr(rel, '.'), *slash = strrchr(rel, '/');
	if (dot && slash && dot < slash)
		dot = NULL;
	for (; *rel && o + 3 < cap; rel++) {
		if (*rel == '/') {
			buf[o++] = '_';
			buf[o++] = '_';
		} else if (rel == dot) {
			buf[o++] = '_';
		} else {
			buf[o++] = *rel;
		}
	}
	buf[o] = '\0';
	return buf;
}
