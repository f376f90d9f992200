/*
 * cv.h: the thin C interface over OpenCV, the only C++ in wakeline
 * (src/cv/cv.cpp).  Every function catches every exception and returns a
 * wl_status with a message; none prints.
 *
 * Images are 8-bit, row-major, with an explicit stride.  Buffers returned
 * here are allocated with malloc and freed by the caller with free().
 * Pixel coordinates use OpenCV's convention (the centre of the top-left
 * pixel at (0, 0)), which is wakeline's.
 */
#ifndef WL_CV_H
#define WL_CV_H

#include <stdint.h>

#ifdef __cplusplus
extern "C" {
#endif

#include "core/err.h" /* a C header: declared with C linkage here */

/* Reads a PNG/JPEG/... file (cv::imread) into 8-bit gray (channels 1) or
 * packed RGB (channels 3), as stored (EXIF orientation is ignored: the
 * pixels are coded pixels).  *pixels (stride = width·channels) is freed with
 * free().  WL_EIO when the file cannot be read or is not an image. */
wl_status wl_cv_imread(const char *path, int channels, uint8_t **pixels, int *width_px, int *height_px,
                       wl_err *err);

/* Finds the inner corners of a cols×rows chessboard (cv::findChessboardCorners
 * with adaptive threshold and normalisation) and refines them with
 * cv::cornerSubPix with winSize (half_win, half_win), i.e. a (2·half_win+1)² window, criteria EPS+COUNT
 * (30 iterations, 0.1 px).  corners receives cols·rows (u, v) pairs, row by
 * row.  *found is 0 when the board is not seen (not an error). */
wl_status wl_cv_find_chessboard(const uint8_t *gray, int width_px, int height_px, int stride, int cols,
                                int rows, int half_win, double *corners, int *found, wl_err *err);

/* Variance of the Laplacian of a gray image: a focus/blur measure (common
 * practice: low values mean a blurred frame). */
wl_status wl_cv_sharpness(const uint8_t *gray, int width_px, int height_px, int stride, double *out,
                          wl_err *err);

/* cv::calibrateCamera over n_views views of the same n_per_view points:
 * object (n_per_view×3, metres or any unit), image (n_views·n_per_view×2).
 * flags are OpenCV's CALIB_* flags (0: five coefficients k1 k2 p1 p2 k3).
 * Gives K (row-major 3×3), dist[5], the RMS reprojection error (pixels)
 * and, if per_view_rms is not NULL, each view's RMS. */
wl_status wl_cv_calibrate(const double *object, int n_per_view, const double *image, int n_views,
                          int width_px, int height_px, int flags, double K[9], double dist[5], double *rms_px,
                          double *per_view_rms, wl_err *err);

/* Leave-one-view-out residual of a calibration with flags: for each view,
 * calibrateCamera on the other views, the held-out view's pose by solvePnP
 * with those intrinsics (iterative, from EPnP), and its points reprojected.
 * *cv_rms_px is the RMS over every held-out point.  Needs n_views >= 4. */
wl_status wl_cv_holdout_rms(const double *object, int n_per_view, const double *image, int n_views,
                            int width_px, int height_px, int flags, double *cv_rms_px, wl_err *err);

/* OpenCV's calibration flags used to choose the distortion model. */
enum {
	WL_CV_FIX_K2 = 1 << 0,
	WL_CV_FIX_K3 = 1 << 1,
	WL_CV_ZERO_TANGENT = 1 << 2,
};
/* Our flags -> OpenCV's CALIB_* flags. */
int wl_cv_flags(int ours);

#ifdef __cplusplus
}
#endif

#endif
