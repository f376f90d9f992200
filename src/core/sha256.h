/*
 * sha256.h: SHA-256 (FIPS 180-4), for the checksums of input files that
 * outputs record (RAW.csv and CAL.json in the CLEAN.json sidecar), so that a
 * result can be traced to the exact bytes it came from (compare with
 * `sha256sum`).  Plain data, nothing on the heap.
 */
#ifndef WL_SHA256_H
#define WL_SHA256_H

#include <stddef.h>
#include <stdint.h>

#include "core/err.h"

/* Streaming: init, update any number of times, final (hex is lower case). */
typedef struct {
	uint32_t h[8];
	uint64_t len;
	unsigned char buf[64];
	size_t nbuf;
} wl_sha256;
void wl_sha256_init(wl_sha256 *s);
void wl_sha256_update(wl_sha256 *s, const void *data, size_t n);
void wl_sha256_final(wl_sha256 *s, char hex[65]);
/* SHA-256 of a file's bytes; *bytes gets its size. */
wl_status wl_sha256_file(const char *path, char hex[65], uint64_t *bytes, wl_err *err);

#endif
