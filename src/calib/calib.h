/*
 * calib.h: calibration, the second stage: floor markers (or hand-picked
 * points) -> homography and a full camera model over the tank, lens
 * intrinsics, plane heights and the water model; CAL.json load/save.
 *
 * Ownership: wl_calib is plain data plus a tank outline array that it owns;
 * wl_calib_init sets defaults, wl_calib_release frees the outline.
 */
#ifndef WL_CALIB_H
#define WL_CALIB_H

#include "core/camera.h"
#include "core/err.h"

#define WL_CALIB_MAX_OUTLINE 64

typedef struct {
	wl_camera cam;             /* intrinsics, distortion, pose, water layer */
	int displayed;             /* 1: pixels are displayed (rotation applied), 0: coded */
	int rotation_deg;          /* the clip's display rotation when calibrated */
	double H_px_to_m[9];       /* floor-plane homography, pixels -> metres (row-major) */
	double plane_height_m;     /* default height of the tracked marker plane above the floor */
	double rms_px, rms_mm;     /* reprojection quality */
	int n_outline;             /* tank outline polygon in floor metres, counter-clockwise */
	double outline_m[WL_CALIB_MAX_OUTLINE][2];
	char intrinsics_source[32]; /* "lens", "homography", "hfov", "points3d" */
	char source[1024];         /* the calibrated clip or image */
} wl_calib;

void wl_calib_init(wl_calib *cal);
void wl_calib_release(wl_calib *cal);

/* Loads / saves CAL.json (saving is atomic).  Load errors name the file and
 * the key. */
wl_status wl_calib_load(const char *path, wl_calib *cal, wl_err *err);
wl_status wl_calib_save(const char *path, const wl_calib *cal, wl_err *err);

/* Maps a pixel (in the calibration's orientation) to the plane at height
 * z_m above the floor, through the full camera model (distortion removed,
 * refraction when z_m is under water).  Returns 0 outside the model. */
int wl_calib_pixel_to_plane(const wl_calib *cal, double u, double v, double z_m, double *x_m, double *y_m);

/* Refuses a calibration for a clip of another size or orientation, with a
 * message that names both. */
wl_status wl_calib_check_clip(const wl_calib *cal, const char *cal_path, int width_px, int height_px,
			      int displayed, wl_err *err);

#endif
