/*
 * raw.h: RAW.csv (the tracker's output, formats/raw.h) as the clean stage
 * needs it: the rows grouped per robot id, each robot's rows checked to be in
 * frame and time order, with the file's size and SHA-256 for the sidecar
 * (raw.c).
 *
 * Ownership: wl_clean_raw_read returns an object that wl_clean_raw_destroy
 * frees.  Memory: every row is kept (about 64 bytes each), since the
 * smoother's backward pass needs a robot's whole track.
 * Errors name the file and line: "file:line: what is wrong: what to do".
 */
#ifndef WL_CLEAN_RAW_H
#define WL_CLEAN_RAW_H

#include <stddef.h>
#include <stdint.h>

#include "core/err.h"

typedef struct {
	double t_s;
	long frame;
	double x_m, y_m, heading_rad; /* NaN when absent */
	unsigned char has_pos;        /* status ok with x_m, y_m */
	unsigned char has_heading;    /* status ok with heading_rad */
	long line;                    /* line in RAW.csv, for messages */
} wl_clean_raw_sample;

typedef struct {
	long id;
	size_t n, cap;
	wl_clean_raw_sample *s; /* in time order (validated strictly increasing) */
} wl_clean_raw_track;

typedef struct {
	char *path; /* as given (owned) */
	size_t ntracks;
	wl_clean_raw_track *tracks; /* in order of first appearance */
	size_t nrows;
	uint64_t bytes;      /* size of the file */
	char sha256_hex[65]; /* SHA-256 of the file's bytes */
} wl_clean_raw;

#define WL_CLEAN_MAX_ROBOTS 4096

/* Reads RAW.csv through formats/raw.h and checks that per id frames and
 * times increase strictly (so no (frame, id) appears twice).  Errors name the file
 * and line.  *out is freed with wl_clean_raw_destroy. */
wl_status wl_clean_raw_read(const char *path, wl_clean_raw **out, wl_err *err);
/* Same over a buffer (name is used in messages; checksum of the buffer). */
wl_status wl_clean_raw_read_mem(const char *name, const char *data, size_t len, wl_clean_raw **out,
                                wl_err *err);
void wl_clean_raw_destroy(wl_clean_raw *raw);

#endif
