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
#include "formats/rawside.h"

typedef struct {
	double t_s;
	long frame;
	double x_m, y_m, heading_rad; /* NaN when absent */
	double u_px, v_px, size_px;   /* the pose in the image, the tag side (or blob
	                               * diameter) in px; NaN when absent */
	unsigned char has_pos;        /* status ok or held, with x_m, y_m */
	unsigned char has_heading;    /* status ok or held, with heading_rad */
	unsigned char held;           /* status held: a pose refined where the detector missed */
	long line;                    /* line in RAW.csv, for messages */
	/* the time the pose belongs to: t_detect_s when given (rolling-shutter
	 * correction), else t_s; a lost row takes t_s plus the previous pose's
	 * t_detect_s - t_s of the same robot */
	double t_meas_s;
} wl_clean_raw_sample;

typedef struct {
	long id;
	size_t n, cap;
	wl_clean_raw_sample *s; /* in time order (validated strictly increasing, t_s and t_meas_s) */
	double t_offset_s;      /* reading: t_detect_s - t_s of the last pose */
} wl_clean_raw_track;

typedef struct {
	char *path; /* as given (owned) */
	size_t ntracks;
	wl_clean_raw_track *tracks; /* in order of first appearance */
	size_t nrows;
	uint64_t bytes;      /* size of the file */
	char sha256_hex[65]; /* SHA-256 of the file's bytes */
	int camera_found;    /* 1: RAW.csv came with its RAW sidecar (raw.json) */
	wl_rawside camera;   /* the camera watch's record from it */
} wl_clean_raw;

#define WL_CLEAN_MAX_ROBOTS 4096

/* Reads RAW.csv through formats/raw.h, and its RAW sidecar when there is
 * one (formats/rawside.h: the camera watch's record), and checks that per
 * id frames and times (t_s, and t_meas_s) increase strictly (so no (frame,
 * id) appears twice).  Errors name the file
 * and line.  *out is freed with wl_clean_raw_destroy. */
wl_status wl_clean_raw_read(const char *path, wl_clean_raw **out, wl_err *err);
/* Same over a buffer (name is used in messages; checksum of the buffer). */
wl_status wl_clean_raw_read_mem(const char *name, const char *data, size_t len, wl_clean_raw **out,
                                wl_err *err);
void wl_clean_raw_destroy(wl_clean_raw *raw);

#endif
