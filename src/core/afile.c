/* afile.c: atomic output files (see afile.h). */
#define _POSIX_C_SOURCE 200809L
#include "core/afile.h"

#include <errno.h>
#include <fcntl.h>
#include <stdatomic.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

struct wl_afile {
	FILE *fp;
	char *path;
	char *tmp;
};

static atomic_uint tmp_counter;
static char owner_tag[32];

void wl_afile_set_owner(const char *tag)
{
	size_t i, n = 0;
	for (i = 0; tag && tag[i] && n + 1 < sizeof owner_tag; i++)
		if ((tag[i] >= 'a' && tag[i] <= 'z') || (tag[i] >= 'A' && tag[i] <= 'Z') ||
		    (tag[i] >= '0' && tag[i] <= '9'))
			owner_tag[n++] = tag[i];
	owner_tag[n] = '\0';
}

const char *wl_afile_owner(void)
{
	return owner_tag;
}

wl_status wl_afile_open(const char *path, wl_afile **out, wl_err *err)
{
	wl_afile *af = NULL;
	const char *slash = strrchr(path, '/');
	size_t dirlen = slash ? (size_t)(slash - path + 1) : 0;
	size_t n = strlen(path) + 96;
	int fd = -1;

	*out = NULL;
	af = calloc(1, sizeof *af);
	if (!af)
		return wl_err_set(err, WL_ENOMEM, "out of memory opening '%s'", path);
	af->path = strdup(path);
	af->tmp = malloc(n);
	if (!af->path || !af->tmp)
		goto nomem;
	if (owner_tag[0])
		snprintf(af->tmp, n, "%.*s.%s.tmp-%s-%ld-%u", (int)dirlen, path, path + dirlen, owner_tag,
		         (long)getpid(), atomic_fetch_add(&tmp_counter, 1));
	else
		snprintf(af->tmp, n, "%.*s.%s.tmp-%ld-%u", (int)dirlen, path, path + dirlen, (long)getpid(),
		         atomic_fetch_add(&tmp_counter, 1));
	fd = open(af->tmp, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0644);
	if (fd < 0) {
		wl_err_set(err, WL_EIO,
		           "cannot create '%s': %s: check that the folder exists and is writable", path,
		           strerror(errno));
		goto fail;
	}
	af->fp = fdopen(fd, "wb");
	if (!af->fp) {
		close(fd);
		unlink(af->tmp);
		goto nomem;
	}
	*out = af;
	return WL_OK;
nomem:
	wl_err_set(err, WL_ENOMEM, "out of memory opening '%s'", path);
fail:
	free(af->path);
	free(af->tmp);
	free(af);
	return err ? err->code : WL_EIO;
}

FILE *wl_afile_fp(wl_afile *af)
{
	return af->fp;
}

const char *wl_afile_tmp_path(const wl_afile *af)
{
	return af->tmp;
}

static void afile_free(wl_afile *af)
{
	free(af->path);
	free(af->tmp);
	free(af);
}

/* Flushes, syncs and closes af's stream (once).  Returns 1 on a failure,
 * with its errno (0 if unknown) in *saved. */
static int afile_close(wl_afile *af, int *saved)
{
	int bad = 0;
	*saved = 0;
	if (!af->fp)
		return 0;
	if (ferror(af->fp) || fflush(af->fp) != 0) {
		bad = 1;
		*saved = errno;
	} else if (fsync(fileno(af->fp)) != 0) {
		bad = 1;
		*saved = errno;
	}
	if (fclose(af->fp) != 0 && !bad) {
		bad = 1;
		*saved = errno;
	}
	af->fp = NULL;
	return bad;
}

static wl_status afile_error(const wl_afile *af, int saved, wl_err *err)
{
	unlink(af->tmp);
	return wl_err_set(err, WL_EIO, "cannot write '%s': %s%s", af->path,
	                  saved ? strerror(saved) : "write error",
	                  saved == ENOSPC ? ": free some space and run again" : "");
}

wl_status wl_afile_sync(wl_afile *af, wl_err *err)
{
	int saved;
	if (!af)
		return WL_OK;
	return afile_close(af, &saved) ? afile_error(af, saved, err) : WL_OK;
}

wl_status wl_afile_commit(wl_afile *af, wl_err *err)
{
	wl_status st = WL_OK;
	int saved, bad;
	if (!af)
		return WL_OK;
	bad = afile_close(af, &saved);
	if (!bad && rename(af->tmp, af->path) != 0) {
		bad = 1;
		saved = errno;
	}
	if (bad)
		st = afile_error(af, saved, err);
	afile_free(af);
	return st;
}

void wl_afile_abort(wl_afile *af)
{
	if (!af)
		return;
	if (af->fp)
		fclose(af->fp);
	unlink(af->tmp);
	afile_free(af);
}

wl_status wl_write_file_atomic(const char *path, const void *data, size_t len, wl_err *err)
{
	wl_afile *af;
	wl_status st = wl_afile_open(path, &af, err);
	if (st)
		return st;
	if (len && fwrite(data, 1, len, wl_afile_fp(af)) != len) {
		int e = errno;
		wl_afile_abort(af);
		return wl_err_set(err, WL_EIO, "cannot write '%s': %s%s", path, strerror(e),
		                  e == ENOSPC ? ": free some space and run again" : "");
	}
	return wl_afile_commit(af, err);
}

wl_status wl_read_file(const char *path, size_t max_bytes, char **out, size_t *len, wl_err *err)
{
	FILE *fp = fopen(path, "rb");
	char *buf = NULL;
	size_t n = 0, cap = 0;
	wl_status st = WL_OK;

	*out = NULL;
	if (len)
		*len = 0;
	if (!fp)
		return wl_err_set(err, WL_EIO, "cannot open '%s': %s", path, strerror(errno));
	for (;;) {
		size_t got;
		if (cap - n < 4096 + 1) {
			size_t ncap = cap ? cap * 2 : 8192;
			char *nb = realloc(buf, ncap);
			if (!nb) {
				st = wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
				goto out;
			}
			buf = nb;
			cap = ncap;
		}
		got = fread(buf + n, 1, cap - n - 1, fp);
		n += got;
		if (n > max_bytes) {
			st = wl_err_set(err, WL_ELIMIT,
			                "'%s' is larger than %zu bytes: is it the right file?", path,
			                max_bytes);
			goto out;
		}
		if (got == 0)
			break;
	}
	if (ferror(fp)) {
		st = wl_err_set(err, WL_EIO, "cannot read '%s': %s", path, strerror(errno));
		goto out;
	}
	buf[n] = '\0';
	*out = buf;
	buf = NULL;
	if (len)
		*len = n;
out:
	free(buf);
	fclose(fp);
	return st;
}

wl_status wl_mkdirs(const char *path, wl_err *err)
{
	char *p = strdup(path);
	wl_status st = WL_OK;
	if (!p)
		return wl_err_set(err, WL_ENOMEM, "out of memory");
	for (char *s = p + 1;; s++) {
		if (*s == '/' || *s == '\0') {
			char c = *s;
			*s = '\0';
			if (mkdir(p, 0755) != 0 && errno != EEXIST) {
				st = wl_err_set(err, WL_EIO, "cannot create folder '%s': %s", p,
				                strerror(errno));
				break;
			}
			*s = c;
			if (c == '\0')
				break;
		}
	}
	free(p);
	return st;
}
