/*
 * clean_work.h: private to src/clean/: the per-robot working arrays that the
 * clean stage's files share (clean.c builds them, smooth.c fills the
 * smoothed state, segment.c the cuts and segments, rows.c turns them into
 * CLEAN.csv rows).  Not part of the library's interface.
 *
 * Ownership: clean_work_alloc allocates every array, clean_work_free frees
 * them (also after a failed alloc).
 */
#ifndef WL_CLEAN_WORK_H
#define WL_CLEAN_WORK_H

#include "clean/clean.h"

#define MAX_OUTLIER_PASSES 4 /* Savitzky-Golay leave-one-out passes */
/* held poses' variance scale (clean.h), and they are left out of the
 * noise estimate */
#define HELD_VAR_SCALE WL_CLEAN_HELD_VAR_SCALE

/* One robot's samples, kept in pieces split at long gaps. */
typedef struct {
	size_t n;                 /* samples kept (in pieces) */
	size_t *src;              /* index into the raw track */
	int *piece;               /* piece number of each sample */
	double *t, *zx, *zy, *zh; /* measurements, NaN when none; t: the pose's own time */
	double *rs;               /* measurement variance scale: 1, or HELD_VAR_SCALE for held poses */
	unsigned char *mpos, *mh; /* 1: rejected as outlier (after smoothing: the union) */
	unsigned char *why;       /* bit 0: position beyond the gate, bit 1: heading */
	/* smoothed state */
	double *x, *y, *h, *vx, *vy, *r, *sv, *sr;
	double *sp; /* smoothed standard deviation of one position component */
	wl_clean_cut *cut;
	int *seg;
	size_t npieces;
	size_t *pstart;        /* first sample of each piece, pstart[npieces] = n */
	unsigned char *phas_h; /* piece has any heading */
	double dt_med;
} work;

/* Allocates the arrays for n samples in npieces pieces; 0 when out of memory. */
int clean_work_alloc(work *w, size_t n, size_t npieces);
void clean_work_free(work *w);

/* Median of v[0..n-1] (reorders v); NaN when n == 0. */
double clean_median(double *v, size_t n);

/* Robust standard deviation of a measurement series (smooth.c). */
double clean_mad_sigma(const work *w, const double *z, int angular);
/* The smoothers: fill x, y, h, vx, vy, r, sv, sr and the outlier masks
 * (smooth.c). */
wl_status clean_smooth_rts(work *w, const wl_clean_params *p, wl_clean_robot *rb, wl_err *err);
wl_status clean_smooth_sg(work *w, const wl_clean_params *p, wl_clean_robot *rb, wl_err *err);

/* Motion onset, settling, wall cut and segments (segment.c). */
void clean_cut_and_segment(work *w, const wl_clean_params *p, wl_clean_robot *rb);
wl_status clean_list_segments(const work *w, wl_clean_robot *rb, wl_err *err);

/* The rows of CLEAN.csv (rows.c). */
wl_clean_status clean_status_of(const work *w, size_t i);
wl_status clean_emit_rows(const work *w, const wl_clean_raw_track *tr, const wl_clean_params *p,
                          wl_clean_result *res, size_t *cap, wl_clean_robot *rb, wl_err *err);

#endif
