/* format.c: the format checks shared by the readers of src/formats/ (see format.h). */
#include "formats/format.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "core/jsonio.h"

static const char *const K_FORMAT = "format";
static const char *const K_VERSION = "format_version";

wl_status wl_format_check_json(const wl_format *f, const cJSON *root, const char *name, wl_err *err)
{
	const cJSON *fmt, *ver;
	double v = 1;
	if (!cJSON_IsObject(root))
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: not a %s (expected a JSON object): give the file `%s` writes", name,
		                  f->what, f->producer);
	fmt = cJSON_GetObjectItemCaseSensitive(root, K_FORMAT);
	if (!cJSON_IsString(fmt))
		return wl_err_set(err, WL_EFORMAT, "%s: not a %s (key '%s' %s): give the file `%s` writes",
		                  name, f->what, K_FORMAT, fmt ? "is not a string" : "is missing",
		                  f->producer);
	if (strcmp(fmt->valuestring, f->format) != 0)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: not a %s (key '%s' is '%.60s', not '%s'): give the file `%s` writes",
		                  name, f->what, K_FORMAT, fmt->valuestring, f->format, f->producer);
	ver = cJSON_GetObjectItemCaseSensitive(root, K_VERSION);
	if (ver) {
		if (!cJSON_IsNumber(ver) || !(ver->valuedouble >= 1) ||
		    ver->valuedouble != floor(ver->valuedouble))
			return wl_err_set(err, WL_EFORMAT, "%s: key '%s' must be a whole number >= 1", name,
			                  K_VERSION);
		v = ver->valuedouble;
	}
	if (v > f->version)
		return wl_err_set(
		        err, WL_EFORMAT,
		        "%s: %s %s %.0f is newer than this wakeline reads (%d): update wakeline, or "
		        "rewrite the file with this version's `%s`",
		        name, f->what, K_VERSION, v, f->version, f->producer);
	return WL_OK;
}

void wl_format_add_json(const wl_format *f, cJSON *root)
{
	cJSON_AddStringToObject(root, K_FORMAT, f->format);
	cJSON_AddNumberToObject(root, K_VERSION, f->version);
}

wl_status wl_format_check_header(const wl_format *f, const wl_csv_row *header, const char *const *required,
                                 wl_err *err)
{
	for (size_t i = 0; required[i]; i++) {
		char found[256] = "";
		size_t used = 0;
		if (wl_csv_col(header, required[i]) >= 0)
			continue;
		for (size_t j = 0; j < header->nfields && used < sizeof found - 1; j++)
			used += (size_t)snprintf(found + used, sizeof found - used, "%s%s", j ? "," : "",
			                         header->fields[j]);
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: the header has no column '%s' (found: %s): is this a %s? give the "
		                  "table `%s` writes",
		                  header->path, header->line, required[i], found, f->what, f->producer);
	}
	return WL_OK;
}

int wl_format_sidecar_path(const char *path, char *buf, size_t cap)
{
	const char *slash = strrchr(path, '/'), *dot = strrchr(path, '.');
	const char *base = slash ? slash + 1 : path;
	size_t stem = dot && dot > base ? (size_t)(dot - path) : strlen(path);
	return (size_t)snprintf(buf, cap, "%.*s.json", (int)stem, path) < cap;
}
