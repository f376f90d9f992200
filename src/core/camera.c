/* camera.c: pinhole camera with distortion and a flat water layer (see camera.h). */
#include "core/camera.h"

#include <math.h>
#include <string.h>

#include "core/linalg.h"

void wl_camera_init(wl_camera *cam, int width_px, int height_px, double fx, double fy, double cx, double cy)
{
	memset(cam, 0, sizeof *cam);
	cam->width_px = width_px;
	cam->height_px = height_px;
	cam->K[0] = fx;
	cam->K[2] = cx;
	cam->K[4] = fy;
	cam->K[5] = cy;
	cam->K[8] = 1;
	cam->R[0] = cam->R[4] = cam->R[8] = 1;
	cam->water_index = WL_WATER_INDEX;
}

static void cross(const double a[3], const double b[3], double o[3])
{
	o[0] = a[1] * b[2] - a[2] * b[1];
	o[1] = a[2] * b[0] - a[0] * b[2];
	o[2] = a[0] * b[1] - a[1] * b[0];
}

static int normalise(double v[3])
{
	double n = sqrt(v[0] * v[0] + v[1] * v[1] + v[2] * v[2]);
	if (n == 0)
		return 0;
	v[0] /= n;
	v[1] /= n;
	v[2] /= n;
	return 1;
}

int wl_camera_look_at(wl_camera *cam, const double eye[3], const double target[3], double roll_rad)
{
	double z[3] = {target[0] - eye[0], target[1] - eye[1], target[2] - eye[2]};
	double up[3] = {0, 1, 0}, y[3], x[3], d;
	if (!normalise(z))
		return 0;
	/* image up = world +y projected onto the image plane; if the axis is
	 * along y, fall back to +z */
	if (fabs(z[1]) > 0.999) {
		up[1] = 0;
		up[2] = 1;
	}
	d = up[0] * z[0] + up[1] * z[1] + up[2] * z[2];
	for (int i = 0; i < 3; i++)
		y[i] = -(up[i] - d * z[i]);
	normalise(y);
	cross(y, z, x);
	/* roll about the optical axis */
	{
		double c = cos(roll_rad), s = sin(roll_rad), xr[3], yr[3];
		for (int i = 0; i < 3; i++) {
			xr[i] = c * x[i] + s * y[i];
			yr[i] = -s * x[i] + c * y[i];
		}
		memcpy(x, xr, sizeof x);
		memcpy(y, yr, sizeof y);
	}
	for (int i = 0; i < 3; i++) {
		cam->R[i] = x[i];
		cam->R[3 + i] = y[i];
		cam->R[6 + i] = z[i];
	}
	for (int i = 0; i < 3; i++)
		cam->t[i] =
		        -(cam->R[i * 3] * eye[0] + cam->R[i * 3 + 1] * eye[1] + cam->R[i * 3 + 2] * eye[2]);
	return 1;
}

void wl_camera_position(const wl_camera *cam, double pos[3])
{
	for (int i = 0; i < 3; i++)
		pos[i] = -(cam->R[i] * cam->t[0] + cam->R[3 + i] * cam->t[1] + cam->R[6 + i] * cam->t[2]);
}

void wl_camera_distort(const wl_camera *cam, double x, double y, double *xd, double *yd)
{
	const double *k = cam->dist;
	double r2 = x * x + y * y;
	double radial = 1 + r2 * (k[0] + r2 * (k[1] + r2 * k[4]));
	*xd = x * radial + 2 * k[2] * x * y + k[3] * (r2 + 2 * x * x);
	*yd = y * radial + k[2] * (r2 + 2 * y * y) + 2 * k[3] * x * y;
}

void wl_camera_undistort(const wl_camera *cam, double xd, double yd, double *x, double *y)
{
	double xu = xd, yu = yd;
	const double *k = cam->dist;
	if (k[0] == 0 && k[1] == 0 && k[2] == 0 && k[3] == 0 && k[4] == 0) {
		*x = xd;
		*y = yd;
		return;
	}
	/* Newton iteration on distort(xu, yu) = (xd, yd) with a numerical
	 * Jacobian; converges in a few steps for any lens a tank camera has. */
	for (int it = 0; it < 50; it++) {
		double fx, fy, ax, ay, bx, by, h = 1e-7;
		wl_camera_distort(cam, xu, yu, &fx, &fy);
		fx -= xd;
		fy -= yd;
		if (fabs(fx) < 1e-14 && fabs(fy) < 1e-14)
			break;
		wl_camera_distort(cam, xu + h, yu, &ax, &ay);
		wl_camera_distort(cam, xu, yu + h, &bx, &by);
		double j00 = (ax - xd - fx) / h, j10 = (ay - yd - fy) / h;
		double j01 = (bx - xd - fx) / h, j11 = (by - yd - fy) / h;
		double det = j00 * j11 - j01 * j10;
		if (fabs(det) < 1e-300)
			break;
		xu -= (j11 * fx - j01 * fy) / det;
		yu -= (-j10 * fx + j00 * fy) / det;
	}
	*x = xu;
	*y = yu;
}

static int to_pixel(const wl_camera *cam, const double Xc[3], double *u, double *v)
{
	double xd, yd;
	if (Xc[2] <= 0)
		return 0;
	wl_camera_distort(cam, Xc[0] / Xc[2], Xc[1] / Xc[2], &xd, &yd);
	*u = cam->K[0] * xd + cam->K[1] * yd + cam->K[2];
	*v = cam->K[4] * yd + cam->K[5];
	return 1;
}

int wl_camera_project(const wl_camera *cam, const double Xw[3], double *u, double *v)
{
	double Xc[3];
	wl_mul3v(cam->R, Xw, Xc);
	for (int i = 0; i < 3; i++)
		Xc[i] += cam->t[i];
	return to_pixel(cam, Xc, u, v);
}

double wl_refract_surface_offset(double h_air_m, double r_m, double d_m, double n)
{
	/* f(s) = sin(theta_air) - n sin(theta_water) rises from <= 0 at s = 0
	 * to >= 0 at s = r: bisection is safe and exact enough in 80 steps. */
	double lo = 0, hi = r_m;
	if (r_m <= 0 || d_m <= 0)
		return r_m;
	for (int i = 0; i < 80; i++) {
		double s = 0.5 * (lo + hi);
		double sa = s / sqrt(s * s + h_air_m * h_air_m);
		double sw = (r_m - s) / sqrt((r_m - s) * (r_m - s) + d_m * d_m);
		if (sa - n * sw < 0)
			lo = s;
		else
			hi = s;
	}
	return 0.5 * (lo + hi);
}

int wl_camera_project_water(const wl_camera *cam, const double Xw[3], double *u, double *v)
{
	double C[3], S[3], dx, dy, r, s;
	double depth = cam->water_depth_m;
	wl_camera_position(cam, C);
	if (depth <= 0 || Xw[2] >= depth || C[2] <= depth)
		return wl_camera_project(cam, Xw, u, v);
	dx = Xw[0] - C[0];
	dy = Xw[1] - C[1];
	r = sqrt(dx * dx + dy * dy);
	s = wl_refract_surface_offset(C[2] - depth, r, depth - Xw[2], cam->water_index);
	S[0] = C[0] + (r > 0 ? dx / r * s : 0);
	S[1] = C[1] + (r > 0 ? dy / r * s : 0);
	S[2] = depth;
	return wl_camera_project(cam, S, u, v);
}

/* The world-frame unit ray through a pixel. */
static void pixel_ray(const wl_camera *cam, double u, double v, double d[3])
{
	double yd = (v - cam->K[5]) / cam->K[4];
	double xd = (u - cam->K[2] - cam->K[1] * yd) / cam->K[0];
	double x, y, dc[3];
	wl_camera_undistort(cam, xd, yd, &x, &y);
	dc[0] = x;
	dc[1] = y;
	dc[2] = 1;
	for (int i = 0; i < 3; i++) /* Rᵀ dc */
		d[i] = cam->R[i] * dc[0] + cam->R[3 + i] * dc[1] + cam->R[6 + i] * dc[2];
	normalise(d);
}

int wl_camera_pixel_to_plane(const wl_camera *cam, double u, double v, double z_m, double *x_m, double *y_m)
{
	double C[3], d[3], lam;
	wl_camera_position(cam, C);
	pixel_ray(cam, u, v, d);
	if (fabs(d[2]) < 1e-12)
		return 0;
	lam = (z_m - C[2]) / d[2];
	if (lam <= 0)
		return 0;
	*x_m = C[0] + lam * d[0];
	*y_m = C[1] + lam * d[1];
	return 1;
}

int wl_camera_pixel_to_plane_water(const wl_camera *cam, double u, double v, double z_m, double *x_m,
                                   double *y_m)
{
	double C[3], d[3], lam, sx, sy, sin_a, sin_w, tan_w, hx, hy;
	double depth = cam->water_depth_m;
	wl_camera_position(cam, C);
	if (depth <= 0 || z_m >= depth || C[2] <= depth)
		return wl_camera_pixel_to_plane(cam, u, v, z_m, x_m, y_m);
	pixel_ray(cam, u, v, d);
	if (d[2] >= 0)
		return 0;
	lam = (depth - C[2]) / d[2];
	sx = C[0] + lam * d[0];
	sy = C[1] + lam * d[1];
	sin_a = sqrt(d[0] * d[0] + d[1] * d[1]);
	sin_w = sin_a / cam->water_index;
	tan_w = sin_w / sqrt(1 - sin_w * sin_w);
	hx = sin_a > 0 ? d[0] / sin_a : 0;
	hy = sin_a > 0 ? d[1] / sin_a : 0;
	*x_m = sx + hx * tan_w * (depth - z_m);
	*y_m = sy + hy * tan_w * (depth - z_m);
	return 1;
}
