/* jsonio.c: cJSON helpers (see jsonio.h). */
#include "core/jsonio.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/afile.h"

static int depth_of(const cJSON *j)
{
	int best = 0;
	for (const cJSON *c = j ? j->child : NULL; c; c = c->next) {
		int d = depth_of(c);
		if (d > best)
			best = d;
	}
	return j ? best + 1 : 0;
}

static void line_col(const char *text, const char *at, long *line, long *col)
{
	*line = 1;
	*col = 1;
	for (const char *p = text; p < at && *p; p++) {
		if (*p == '\n') {
			(*line)++;
			*col = 1;
		} else {
			(*col)++;
		}
	}
}

wl_status wl_json_parse(const char *name, const char *text, size_t len, cJSON **out, wl_err *err)
{
	const char *end = NULL;
	cJSON *j;
	*out = NULL;
	if (len > WL_JSON_MAX_BYTES)
		return wl_err_set(err, WL_ELIMIT, "'%s' is larger than %u bytes", name, WL_JSON_MAX_BYTES);
	j = cJSON_ParseWithLengthOpts(text, len, &end, 0);
	if (!j) {
		long line, col;
		if (!end)
			end = text + len;
		line_col(text, end, &line, &col);
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld:%ld: not valid JSON here: check brackets, commas and quotes", name,
		                  line, col);
	}
	if (depth_of(j) > WL_JSON_MAX_DEPTH) {
		cJSON_Delete(j);
		return wl_err_set(err, WL_ELIMIT, "%s: nested deeper than %d levels: is this the right file?",
		                  name, WL_JSON_MAX_DEPTH);
	}
	*out = j;
	return WL_OK;
}

wl_status wl_json_load(const char *path, cJSON **out, wl_err *err)
{
	char *text = NULL;
	size_t len = 0;
	wl_status st = wl_read_file(path, WL_JSON_MAX_BYTES, &text, &len, err);
	if (st)
		return st;
	st = wl_json_parse(path, text, len, out, err);
	free(text);
	return st;
}

wl_status wl_json_save(const char *path, const cJSON *root, wl_err *err)
{
	char *text = cJSON_Print(root);
	wl_status st;
	size_t n;
	if (!text)
		return wl_err_set(err, WL_ENOMEM, "out of memory writing '%s'", path);
	n = strlen(text);
	text[n] = '\n'; /* cJSON's buffer ends with the NUL we overwrite; write n+1 bytes */
	st = wl_write_file_atomic(path, text, n + 1, err);
	cJSON_free(text);
	return st;
}

wl_status wl_json_number(const cJSON *obj, const char *key, const char *name, double *out, wl_err *err)
{
	const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
	if (!v)
		return wl_err_set(err, WL_EFORMAT, "%s: key '%s' is missing", name, key);
	if (!cJSON_IsNumber(v) || !isfinite(v->valuedouble))
		return wl_err_set(err, WL_EFORMAT, "%s: key '%s' must be a number", name, key);
	*out = v->valuedouble;
	return WL_OK;
}

double wl_json_number_or(const cJSON *obj, const char *key, double fallback)
{
	const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
	return cJSON_IsNumber(v) && isfinite(v->valuedouble) ? v->valuedouble : fallback;
}

wl_status wl_json_numbers(const cJSON *obj, const char *key, const char *name, double *out, size_t n,
                          wl_err *err)
{
	const cJSON *a = cJSON_GetObjectItemCaseSensitive(obj, key), *v;
	size_t i = 0;
	if (!a)
		return wl_err_set(err, WL_EFORMAT, "%s: key '%s' is missing", name, key);
	if (!cJSON_IsArray(a) || (size_t)cJSON_GetArraySize(a) != n)
		return wl_err_set(err, WL_EFORMAT, "%s: key '%s' must be an array of %zu numbers", name, key,
		                  n);
	cJSON_ArrayForEach(v, a)
	{
		if (!cJSON_IsNumber(v) || !isfinite(v->valuedouble))
			return wl_err_set(err, WL_EFORMAT, "%s: key '%s': item %zu is not a number", name,
			                  key, i);
		out[i++] = v->valuedouble;
	}
	return WL_OK;
}

wl_status wl_json_string(const cJSON *obj, const char *key, const char *name, const char **out, wl_err *err)
{
	const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
	if (!v)
		return wl_err_set(err, WL_EFORMAT, "%s: key '%s' is missing", name, key);
	if (!cJSON_IsString(v))
		return wl_err_set(err, WL_EFORMAT, "%s: key '%s' must be a string", name, key);
	*out = v->valuestring;
	return WL_OK;
}

const char *wl_json_string_or(const cJSON *obj, const char *key, const char *fallback)
{
	const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
	return cJSON_IsString(v) ? v->valuestring : fallback;
}

cJSON *wl_json_add_numbers(cJSON *obj, const char *key, const double *v, size_t n)
{
	cJSON *a = cJSON_AddArrayToObject(obj, key);
	for (size_t i = 0; a && i < n; i++)
		cJSON_AddItemToArray(a, cJSON_CreateNumber(v[i]));
	return a;
}
