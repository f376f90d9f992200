/*
 * paths.c: the paths a batch stores in its files (batch.json, clip.json,
 * what the workers write) are relative to OUT, so that an output folder
 * can be moved or merged from another node; these helpers make them.
 */
#define _GNU_SOURCE
#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "batch/batch_priv.h"

/* Removes "." and "x/.." components and repeated slashes of an absolute
 * path in place. */
static void normalise(char *p)
{
	char *out = p, *in = p;
	while (*in) {
		char *seg;
		size_t n;
		while (*in == '/')
			in++;
		seg = in;
		while (*in && *in != '/')
			in++;
		n = (size_t)(in - seg);
		if (n == 0 || (n == 1 && seg[0] == '.'))
			continue;
		if (n == 2 && seg[0] == '.' && seg[1] == '.') {
			while (out > p && out[-1] != '/')
				out--;
			if (out > p)
				out--;
			continue;
		}
		*out++ = '/';
		memmove(out, seg, n);
		out += n;
	}
	if (out == p)
		*out++ = '/';
	*out = '\0';
}

int batch_abspath(const char *path, char *out, size_t cap)
{
	char buf[PATH_MAX];
	if (realpath(path, buf)) {
		snprintf(out, cap, "%s", buf);
		return 0;
	}
	if (path[0] == '/') {
		snprintf(out, cap, "%s", path);
	} else {
		char cwd[PATH_MAX];
		if (!getcwd(cwd, sizeof cwd))
			return -1;
		if ((size_t)snprintf(out, cap, "%s/%s", cwd, path) >= cap)
			return -1;
	}
	normalise(out);
	return 0;
}

/* The next component of an absolute path at *p: its start and length. */
static size_t next_comp(const char **p, const char **start)
{
	while (**p == '/')
		(*p)++;
	*start = *p;
	while (**p && **p != '/')
		(*p)++;
	return (size_t)(*p - *start);
}

void batch_relpath(const char *base, const char *target, char *out, size_t cap)
{
	const char *b = base, *t = target, *bs, *ts, *bkeep, *tkeep;
	size_t bn, tn, len = 0;
	/* skip the common leading components */
	for (;;) {
		bkeep = b;
		tkeep = t;
		bn = next_comp(&b, &bs);
		tn = next_comp(&t, &ts);
		if (bn == 0 || tn == 0 || bn != tn || memcmp(bs, ts, bn) != 0)
			break;
	}
	b = bkeep;
	t = tkeep;
	out[0] = '\0';
	/* one ".." per component of base left */
	while (next_comp(&b, &bs) > 0)
		len += (size_t)snprintf(out + len, len < cap ? cap - len : 0, "%s..", len ? "/" : "");
	while ((tn = next_comp(&t, &ts)) > 0)
		len += (size_t)snprintf(out + len, len < cap ? cap - len : 0, "%s%.*s", len ? "/" : "",
		                        (int)tn, ts);
	if (len == 0)
		snprintf(out, cap, ".");
}

char *batch_rel_to(const char *base_abs, const char *path)
{
	char abs[PATH_MAX], rel[PATH_MAX * 2];
	if (!path || !path[0])
		return strdup("");
	if (batch_abspath(path, abs, sizeof abs) != 0)
		return strdup(path);
	batch_relpath(base_abs, abs, rel, sizeof rel);
	return strdup(rel);
}
