/* csvio.c: CSV reading on libcsv and locale-independent writing (see csvio.h). */
#define _POSIX_C_SOURCE 200809L
#include "core/csvio.h"

#include <csv.h>
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

typedef struct {
	const char *path;
	wl_csv_row_fn fn;
	void *ctx;
	wl_err *err;
	wl_status st;
	long line;     /* physical line being fed */
	long row_line; /* line where the current row started (0: no cell yet) */
	long index;
	char *fields[WL_CSV_MAX_FIELDS];
	size_t nfields;
} reader;

static void on_field(void *s, size_t len, void *data)
{
	reader *r = data;
	char *copy;
	if (r->st)
		return;
	if (r->nfields >= WL_CSV_MAX_FIELDS) {
		r->st = wl_err_set(r->err, WL_ELIMIT,
		                   "%s:%ld: more than %d cells in a row: is this the right file?", r->path,
		                   r->row_line, WL_CSV_MAX_FIELDS);
		return;
	}
	copy = malloc(len + 1);
	if (!copy) {
		r->st = wl_err_set(r->err, WL_ENOMEM, "%s:%ld: out of memory", r->path, r->row_line);
		return;
	}
	if (len)
		memcpy(copy, s, len);
	copy[len] = '\0';
	r->fields[r->nfields++] = copy;
}

static void clear_fields(reader *r)
{
	for (size_t i = 0; i < r->nfields; i++)
		free(r->fields[i]);
	r->nfields = 0;
	r->row_line = 0;
}

static void on_row(int c, void *data)
{
	reader *r = data;
	(void)c;
	if (!r->st && r->nfields > 0 && r->fields[0][0] != '#') {
		wl_csv_row row = {r->path, r->row_line, r->index, r->nfields, r->fields};
		r->st = r->fn(&row, r->ctx, r->err);
		r->index++;
	}
	clear_fields(r);
}

static const char BOM[] = "\xEF\xBB\xBF";

static wl_status feed(reader *r, struct csv_parser *p, const char *buf, size_t n)
{
	/* pstate 0 is libcsv's "row not begun": a row that starts in this
	 * chunk starts on this line, even if a quoted cell runs on */
	if (p->pstate == 0 && r->nfields == 0)
		r->row_line = r->line;
	if (r->line == 1 && n >= 3 && memcmp(buf, BOM, 3) == 0) {
		buf += 3;
		n -= 3;
	}
	if (csv_parse(p, buf, n, on_field, on_row, r) != n && !r->st)
		r->st = wl_err_set(r->err, WL_EFORMAT, "%s:%ld: %s: check the quotes on this line", r->path,
		                   r->line, csv_strerror(csv_error(p)));
	return r->st;
}

static wl_status finish(reader *r, struct csv_parser *p)
{
	if (!r->st && csv_fini(p, on_field, on_row, r) != 0 && !r->st)
		r->st = wl_err_set(r->err, WL_EFORMAT, "%s:%ld: %s: a quoted cell is not closed", r->path,
		                   r->line, csv_strerror(csv_error(p)));
	clear_fields(r);
	csv_free(p);
	return r->st;
}

static int init_parser(struct csv_parser *p)
{
	return csv_init(p, CSV_STRICT | CSV_APPEND_NULL | CSV_STRICT_FINI);
}

wl_status wl_csv_read(const char *path, wl_csv_row_fn fn, void *ctx, wl_err *err)
{
	struct csv_parser p;
	reader r = {.path = path, .fn = fn, .ctx = ctx, .err = err};
	FILE *fp = strcmp(path, "-") == 0 ? stdin : fopen(path, "rb");
	char *line = NULL;
	size_t cap = 0;
	ssize_t n;

	if (!fp)
		return wl_err_set(err, WL_EIO, "cannot open '%s': %s", path, strerror(errno));
	if (init_parser(&p) != 0) {
		if (fp != stdin)
			fclose(fp);
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", path);
	}
	while (!r.st && (n = getline(&line, &cap, fp)) > 0) {
		r.line++;
		if (n > WL_CSV_MAX_LINE) {
			r.st = wl_err_set(err, WL_ELIMIT,
			                  "%s:%ld: line longer than %d bytes: is this a CSV file?", path,
			                  r.line, WL_CSV_MAX_LINE);
			break;
		}
		if (memchr(line, '\0', (size_t)n)) {
			r.st = wl_err_set(err, WL_EFORMAT, "%s:%ld: a NUL byte: this is not a text CSV file",
			                  path, r.line);
			break;
		}
		feed(&r, &p, line, (size_t)n);
	}
	if (!r.st && ferror(fp))
		r.st = wl_err_set(err, WL_EIO, "cannot read '%s': %s", path, strerror(errno));
	free(line);
	if (fp != stdin)
		fclose(fp);
	return finish(&r, &p);
}

wl_status wl_csv_read_mem(const char *name, const char *data, size_t len, wl_csv_row_fn fn, void *ctx,
                          wl_err *err)
{
	struct csv_parser p;
	reader r = {.path = name, .fn = fn, .ctx = ctx, .err = err};
	size_t pos = 0;
	if (init_parser(&p) != 0)
		return wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", name);
	while (!r.st && pos < len) {
		const char *nl = memchr(data + pos, '\n', len - pos);
		size_t n = nl ? (size_t)(nl - (data + pos)) + 1 : len - pos;
		r.line++;
		if (n > WL_CSV_MAX_LINE) {
			r.st = wl_err_set(err, WL_ELIMIT,
			                  "%s:%ld: line longer than %d bytes: is this a CSV file?", name,
			                  r.line, WL_CSV_MAX_LINE);
			break;
		}
		if (memchr(data + pos, '\0', n)) {
			r.st = wl_err_set(err, WL_EFORMAT, "%s:%ld: a NUL byte: this is not a text CSV file",
			                  name, r.line);
			break;
		}
		feed(&r, &p, data + pos, n);
		pos += n;
	}
	return finish(&r, &p);
}

static int trimmed_eq(const char *cell, const char *name)
{
	size_t n = strlen(name);
	while (*cell == ' ' || *cell == '\t')
		cell++;
	if (strncmp(cell, name, n) != 0)
		return 0;
	cell += n;
	while (*cell == ' ' || *cell == '\t' || *cell == '\r')
		cell++;
	return *cell == '\0';
}

int wl_csv_col(const wl_csv_row *header, const char *name)
{
	for (size_t i = 0; i < header->nfields; i++)
		if (trimmed_eq(header->fields[i], name))
			return (int)i;
	return -1;
}

wl_status wl_csv_require(const wl_csv_row *header, const char *const *required, wl_err *err)
{
	for (size_t i = 0; required[i]; i++) {
		if (wl_csv_col(header, required[i]) < 0) {
			char found[256] = "";
			size_t used = 0;
			for (size_t j = 0; j < header->nfields && used < sizeof found - 1; j++)
				used += (size_t)snprintf(found + used, sizeof found - used, "%s%s",
				                         j ? "," : "", header->fields[j]);
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: the header has no column '%s' (found: %s): add the column",
			                  header->path, header->line, required[i], found);
		}
	}
	return WL_OK;
}

int wl_csv_empty(const wl_csv_row *row, int col)
{
	const char *s;
	if (col < 0 || (size_t)col >= row->nfields)
		return 1;
	for (s = row->fields[col]; *s == ' ' || *s == '\t' || *s == '\r'; s++)
		;
	return *s == '\0';
}

int wl_parse_double(const char *s, double *out)
{
	char *end;
	double v;
	while (*s == ' ' || *s == '\t')
		s++;
	if (!*s)
		return 0;
	errno = 0;
	v = strtod(s, &end);
	if (end == s)
		return 0;
	while (*end == ' ' || *end == '\t' || *end == '\r')
		end++;
	if (*end || !isfinite(v) || errno == ERANGE)
		return 0;
	*out = v;
	return 1;
}

int wl_parse_long(const char *s, long *out)
{
	char *end;
	long v;
	while (*s == ' ' || *s == '\t')
		s++;
	if (!*s)
		return 0;
	errno = 0;
	v = strtol(s, &end, 10);
	if (end == s || errno == ERANGE)
		return 0;
	while (*end == ' ' || *end == '\t' || *end == '\r')
		end++;
	if (*end)
		return 0;
	*out = v;
	return 1;
}

wl_status wl_csv_get_double(const wl_csv_row *row, int col, const char *name, double *out, wl_err *err)
{
	if (col < 0 || (size_t)col >= row->nfields)
		return wl_err_set(err, WL_EFORMAT, "%s:%ld: column '%s' is missing on this row (%zu cells)",
		                  row->path, row->line, name, row->nfields);
	if (!wl_parse_double(row->fields[col], out))
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: column '%s': '%.40s' is not a number (use '.' decimals)",
		                  row->path, row->line, name, row->fields[col]);
	return WL_OK;
}

wl_status wl_csv_get_long(const wl_csv_row *row, int col, const char *name, long *out, wl_err *err)
{
	if (col < 0 || (size_t)col >= row->nfields)
		return wl_err_set(err, WL_EFORMAT, "%s:%ld: column '%s' is missing on this row (%zu cells)",
		                  row->path, row->line, name, row->nfields);
	if (!wl_parse_long(row->fields[col], out))
		return wl_err_set(err, WL_EFORMAT, "%s:%ld: column '%s': '%.40s' is not a whole number",
		                  row->path, row->line, name, row->fields[col]);
	return WL_OK;
}

/* ---- writing ---- */

static void dot_decimal(char *buf)
{
	for (char *p = buf; *p; p++)
		if (*p == ',')
			*p = '.';
}

char *wl_fmt_fixed(char *buf, double v, int decimals)
{
	if (!isfinite(v)) {
		snprintf(buf, WL_NUMBUF, "%s", isnan(v) ? "nan" : (v > 0 ? "inf" : "-inf"));
		return buf;
	}
	snprintf(buf, WL_NUMBUF, "%.*f", decimals, v);
	dot_decimal(buf);
	if (strcmp(buf, "-0") == 0 || (buf[0] == '-' && strspn(buf + 1, "0.") == strlen(buf + 1)))
		memmove(buf, buf + 1, strlen(buf));
	return buf;
}

char *wl_fmt_g(char *buf, double v, int sig)
{
	if (!isfinite(v)) {
		snprintf(buf, WL_NUMBUF, "%s", isnan(v) ? "nan" : (v > 0 ? "inf" : "-inf"));
		return buf;
	}
	snprintf(buf, WL_NUMBUF, "%.*g", sig, v);
	dot_decimal(buf);
	return buf;
}

void wl_csvw_init(wl_csv_writer *w, FILE *fp)
{
	w->fp = fp;
	w->ncell = 0;
}

static void sep(wl_csv_writer *w)
{
	if (w->ncell++)
		fputc(',', w->fp);
}

void wl_csvw_str(wl_csv_writer *w, const char *s)
{
	sep(w);
	if (strpbrk(s, ",\"\r\n"))
		csv_fwrite(w->fp, s, strlen(s));
	else
		fputs(s, w->fp);
}

void wl_csvw_num(wl_csv_writer *w, double v, int decimals)
{
	char b[WL_NUMBUF];
	sep(w);
	if (!isnan(v))
		fputs(wl_fmt_fixed(b, v, decimals), w->fp);
}

void wl_csvw_g(wl_csv_writer *w, double v, int sig)
{
	char b[WL_NUMBUF];
	sep(w);
	if (!isnan(v))
		fputs(wl_fmt_g(b, v, sig), w->fp);
}

void wl_csvw_int(wl_csv_writer *w, long long v)
{
	sep(w);
	fprintf(w->fp, "%lld", v);
}

void wl_csvw_empty(wl_csv_writer *w)
{
	sep(w);
}

void wl_csvw_end(wl_csv_writer *w)
{
	fputc('\n', w->fp);
	w->ncell = 0;
}

void wl_csvw_header(wl_csv_writer *w, const char *const *names)
{
	for (size_t i = 0; names[i]; i++)
		wl_csvw_str(w, names[i]);
	wl_csvw_end(w);
}
