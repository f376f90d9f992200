/*
 * lens.h: lens intrinsics from views of a printed chessboard (Zhang 2000,
 * through OpenCV's calibrateCamera in src/cv/), and LENS.json.
 *
 * A wl_lens_collector takes frames one at a time (memory grows only with
 * the views kept, at most WL_LENS_MAX_VIEWS), skips frames without the
 * board, frames too alike to a kept one, and (at the end) blurred ones,
 * then calibrates.  Ownership: wl_lens_collector_create / _destroy (NULL ok).
 */
#ifndef WL_LENS_H
#define WL_LENS_H

#include <stdint.h>

#include "core/camera.h"
#include "core/err.h"

#define WL_LENS_MAX_VIEWS 200

#define WL_LENS_MAX_MODELS 5

/* One distortion model tried (see wl_lens_collector_finish). */
typedef struct {
	char name[24];     /* "k1", "k1k2", "k1k2k3", "k1k2p1p2", "k1k2p1p2k3" */
	double rms_px;     /* fit to every view */
	double holdout_px; /* leave-one-view-out: each view predicted from the others */
	double fx, fy;     /* its focal lengths, for the report */
} wl_lens_model;

typedef struct {
	wl_camera cam;  /* K and distortion; identity pose */
	char model[24]; /* the distortion model chosen */
	int n_models;
	wl_lens_model models[WL_LENS_MAX_MODELS];
	double rms_px; /* RMS reprojection error of the board corners */
	int board_cols, board_rows;
	double square_mm;
	int views_used, views_no_board, views_alike, views_blurred;
	double coverage; /* fraction of a 10×10 grid of image cells that corners fell in */
	char source[1024];
} wl_lens;

typedef struct wl_lens_collector wl_lens_collector;

/* cols×rows inner corners, squares of square_mm.  half_win: cornerSubPix's
 * winSize (half the search window: 5 searches 11×11 pixels), as in
 * OpenCV's own calibration test, which passes (5, 5). */
wl_status wl_lens_collector_create(int cols, int rows, double square_mm, int half_win,
                                   wl_lens_collector **out, wl_err *err);
void wl_lens_collector_destroy(wl_lens_collector *lc);

/* Offers one 8-bit gray frame.  All frames must have the same size.
 * *kept is set to 1 when the view was kept. */
wl_status wl_lens_collector_add(wl_lens_collector *lc, const uint8_t *gray, int width_px, int height_px,
                                int stride, int *kept, wl_err *err);

/* Drops blurred views (Laplacian variance below a quarter of the median
 * of the kept views), then calibrates with each distortion model (k1;
 * k1 k2; k1 k2 k3; k1 k2 p1 p2; all five) and keeps the one with the
 * lowest leave-one-view-out residual, a model with more terms only when it
 * predicts the left-out views 3% better than the simpler one it extends
 * (fit residual always prefers more terms).  With fewer than 5 views the
 * models cannot be compared and k1 k2 is taken.  WL_ECALIB with fewer than
 * 3 views. */
wl_status wl_lens_collector_finish(wl_lens_collector *lc, wl_lens *lens, wl_err *err);

/* LENS.json: camera_matrix, distortion, image_size_px, rms_px and the
 * counts above.  Saving is atomic; load errors name the file and key. */
wl_status wl_lens_save(const char *path, const wl_lens *lens, wl_err *err);
wl_status wl_lens_load(const char *path, wl_lens *lens, wl_err *err);

#endif
