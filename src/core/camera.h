/*
 * camera.h: the camera model shared by the renderer, calibration and the
 * tracker: a pinhole camera with OpenCV's radial/tangential distortion,
 * posed over the tank, and an optional flat water layer over the floor.
 *
 * Frames and units (see DEVELOPERS.md, "Conventions"):
 *   tank (world): right-handed, metres, floor plane z = 0, z up toward the camera.
 *   camera: x right, y down, z forward along the optical axis.  Xc = R·Xw + t.
 *   pixels: u right, v down, the centre of the top-left pixel at (0, 0)
 *   (OpenCV's convention; AprilTag's is converted at the detector boundary).
 *   Water: with water_depth_m > 0 the floor z = 0 lies under still water
 *   whose flat surface is the plane z = water_depth_m; rays to points below
 *   it refract by Snell's law with index water_index.
 * The struct is plain data: copy it freely; nothing to free.
 */
#ifndef WL_CAMERA_H
#define WL_CAMERA_H

typedef struct {
	int width_px, height_px; /* image the intrinsics refer to */
	double K[9];             /* [fx 0 cx; 0 fy cy; 0 0 1], pixels */
	double dist[5];          /* k1 k2 p1 p2 k3 (OpenCV order) */
	double R[9];             /* world -> camera rotation, row-major */
	double t[3];             /* world -> camera translation, metres */
	double water_depth_m;    /* 0 when there is no water layer */
	double water_index;      /* refractive index of the water (1.333) */
} wl_camera;

#define WL_WATER_INDEX 1.333 /* 20 °C, 589 nm: IAPWS R9-97 gives 1.33299 */

/* An ideal camera: identity pose, no distortion, no water. */
void wl_camera_init(wl_camera *cam, int width_px, int height_px, double fx, double fy, double cx, double cy);

/* Poses the camera at eye (world metres) looking at target; roll_rad turns
 * the image clockwise about the optical axis as seen by the camera.  With
 * roll 0 the image's "up" is the world +y direction projected (for a nadir
 * view: u along +x, v along -y).  Returns 0 when eye == target. */
int wl_camera_look_at(wl_camera *cam, const double eye[3], const double target[3], double roll_rad);

/* The camera centre in world coordinates, C = -Rᵀt. */
void wl_camera_position(const wl_camera *cam, double pos[3]);

/* Applies / removes lens distortion on normalised image coordinates.
 * Removal iterates (as OpenCV's undistortPoints does) to ~1e-12. */
void wl_camera_distort(const wl_camera *cam, double x, double y, double *xd, double *yd);
void wl_camera_undistort(const wl_camera *cam, double xd, double yd, double *x, double *y);

/* Projects a world point to pixels, ignoring water.  Returns 0 when the
 * point is behind the camera. */
int wl_camera_project(const wl_camera *cam, const double Xw[3], double *u, double *v);

/* Projects a world point, refracting at the water surface when the point
 * lies below it (z < water_depth_m) and the camera above it.  Returns 0 when
 * the point is behind the camera. */
int wl_camera_project_water(const wl_camera *cam, const double Xw[3], double *u, double *v);

/* Back-projects a pixel onto the world plane z = z_m (no refraction).
 * Returns 0 when the ray does not meet the plane in front of the camera. */
int wl_camera_pixel_to_plane(const wl_camera *cam, double u, double v, double z_m, double *x_m, double *y_m);

/* Back-projects a pixel onto the plane z = z_m, refracting at the water
 * surface when z_m lies below it.  Returns 0 on failure. */
int wl_camera_pixel_to_plane_water(const wl_camera *cam, double u, double v, double z_m, double *x_m,
                                   double *y_m);

/* The surface point through which a ray from camera centre C (above the
 * surface, at height h_air above it) reaches a point at horizontal distance
 * r_m from nadir and depth d_m below the surface (Snell's law, index n):
 * returns the horizontal distance of that surface point from nadir. */
double wl_refract_surface_offset(double h_air_m, double r_m, double d_m, double n);

#endif
