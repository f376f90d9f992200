/*
 * jsonio.h: structured files through cJSON: loading with line/column in
 * errors, typed getters whose errors name the file and the key, and atomic
 * saving.  Limits: WL_JSON_MAX_BYTES per file, WL_JSON_MAX_DEPTH nesting.
 */
#ifndef WL_JSONIO_H
#define WL_JSONIO_H

#include <stddef.h>
#include <cjson/cJSON.h>

#include "core/err.h"

#define WL_JSON_MAX_BYTES (16u << 20)
#define WL_JSON_MAX_DEPTH 64

/* Parses a file.  The caller frees *out with cJSON_Delete. */
wl_status wl_json_load(const char *path, cJSON **out, wl_err *err);
/* Same over a buffer (name is used in messages). */
wl_status wl_json_parse(const char *name, const char *text, size_t len, cJSON **out, wl_err *err);

/* Writes root, formatted, atomically.  Numbers use '.' decimals. */
wl_status wl_json_save(const char *path, const cJSON *root, wl_err *err);

/* Typed getters: `name` is the file for messages.  A missing key is an error
 * unless a *_or variant is used. */
wl_status wl_json_number(const cJSON *obj, const char *key, const char *name, double *out, wl_err *err);
double wl_json_number_or(const cJSON *obj, const char *key, double fallback);
/* An array of exactly n numbers. */
wl_status wl_json_numbers(const cJSON *obj, const char *key, const char *name, double *out, size_t n,
                          wl_err *err);
/* A string; the pointer is borrowed from obj. */
wl_status wl_json_string(const cJSON *obj, const char *key, const char *name, const char **out, wl_err *err);
const char *wl_json_string_or(const cJSON *obj, const char *key, const char *fallback);

/* Adds an array of n numbers under key.  Returns the array or NULL. */
cJSON *wl_json_add_numbers(cJSON *obj, const char *key, const double *v, size_t n);

#endif
