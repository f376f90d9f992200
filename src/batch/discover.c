/*
 * discover.c: the clips of a batch: the video files under a folder, in an
 * order that is the same on every run, and the name of each clip's output
 * folder (see batch.h).
 */
#define _XOPEN_SOURCE 700
#include "batch/batch.h"

#include <dirent.h>
#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>

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
	if (out->n)
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
