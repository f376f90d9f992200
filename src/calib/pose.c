/*
 * pose.c: the camera over the tank from correspondences: focal length from
 * a floor homography (Zhang 2000, the two orthogonality constraints with
 * square pixels and the principal point known), pose from the homography
 * and K (polar decomposition of [r1 r2 r1×r2]), DLT of the 3×4 projection
 * for points at several heights (Hartley & Zisserman, §7.1), and
 * Levenberg-Marquardt refinement of the reprojection error through the
 * camera model, with refraction at the water surface when asked.
 */
#include "calib/calib.h"

#include <math.h>
#include <string.h>

#include "core/angle.h"
#include "core/linalg.h"

/* Views closer to nadir than this leave f undetermined in practice: the
 * perspective terms of H that carry f shrink as sin²(tilt), so pixel noise
 * of 0.5 px in a 1000 px image moves f by about 1% at 10°.  Our choice. */
#define MIN_TILT_FOR_FOCAL_DEG 10.0

static void cross3(const double a[3], const double b[3], double o[3])
{
	o[0] = a[1] * b[2] - a[2] * b[1];
	o[1] = a[2] * b[0] - a[0] * b[2];
	o[2] = a[0] * b[1] - a[1] * b[0];
}

/* R = Q (QᵀQ)^(-1/2): the rotation nearest to Q in the Frobenius norm. */
static int polar(const double Q[9], double R[9])
{
	double S[9], ev[3], V[9], D[9] = {0}, tmp[9], Vt[9], Sih[9], Qt[9];
	wl_mat_transpose(Q, Qt, 3, 3);
	wl_mul3(Qt, Q, S);
	wl_sym_eig(S, 3, ev, V);
	for (int i = 0; i < 3; i++) {
		if (!(ev[i] > 1e-300))
			return 0;
		D[4 * i] = 1 / sqrt(ev[i]);
	}
	wl_mat_transpose(V, Vt, 3, 3);
	wl_mul3(V, D, tmp);
	wl_mul3(tmp, Vt, Sih);
	wl_mul3(Q, Sih, R);
	return wl_det3(R) > 0;
}

static void shift_principal(const double H[9], double cx, double cy, double G[9])
{
	for (int c = 0; c < 3; c++) {
		G[c] = H[c] - cx * H[6 + c];
		G[3 + c] = H[3 + c] - cy * H[6 + c];
		G[6 + c] = H[6 + c];
	}
}

int wl_focal_from_homography(const double H[9], double cx, double cy, double *f_px)
{
	double G[9], a1, b1, a2, b2, F, nrm = 0;
	wl_camera cam;
	shift_principal(H, cx, cy, G);
	/* scale G so that its first two columns have unit size in pixels */
	for (int i = 0; i < 9; i++)
		if (i % 3 != 2)
			nrm = fmax(nrm, fabs(G[i]));
	if (!(nrm > 0))
		return 0;
	for (int i = 0; i < 9; i++)
		G[i] /= nrm;
	/* h1ᵀ ω h2 = 0 and h1ᵀ ω h1 = h2ᵀ ω h2, ω = diag(1/f², 1/f², 1):
	 * a_k + F b_k = 0 with F = f²; least squares in F */
	a1 = G[0] * G[1] + G[3] * G[4];
	b1 = G[6] * G[7];
	a2 = G[0] * G[0] + G[3] * G[3] - G[1] * G[1] - G[4] * G[4];
	b2 = G[6] * G[6] - G[7] * G[7];
	if (b1 * b1 + b2 * b2 < 1e-300)
		return 0;
	F = -(a1 * b1 + a2 * b2) / (b1 * b1 + b2 * b2);
	if (!(F > 0) || !isfinite(F))
		return 0;
	*f_px = sqrt(F);
	/* too close to nadir? judge the tilt that this f implies */
	wl_camera_init(&cam, 0, 0, *f_px, *f_px, cx, cy);
	{
		double Hs[9];
		memcpy(Hs, H, sizeof Hs);
		if (Hs[8] < 0)
			for (int i = 0; i < 9; i++)
				Hs[i] = -Hs[i];
		if (wl_pose_from_homography(Hs, &cam, NULL) != WL_OK)
			return 0;
	}
	return acos(fmin(1, fabs(cam.R[8]))) / WL_DEG >= MIN_TILT_FOR_FOCAL_DEG;
}

wl_status wl_pose_from_homography(const double H[9], wl_camera *cam, wl_err *err)
{
	double Ki[9], M[9], m1[3], m2[3], m3[3], r3[3], Q[9], R[9], lam, C[3];
	if (!wl_inv3(cam->K, Ki))
		return wl_err_set(err, WL_ECALIB, "camera matrix is singular");
	wl_mul3(Ki, H, M);
	for (int i = 0; i < 3; i++) {
		m1[i] = M[3 * i];
		m2[i] = M[3 * i + 1];
		m3[i] = M[3 * i + 2];
	}
	lam = 2 / (sqrt(m1[0] * m1[0] + m1[1] * m1[1] + m1[2] * m1[2]) +
	           sqrt(m2[0] * m2[0] + m2[1] * m2[1] + m2[2] * m2[2]));
	if (!isfinite(lam) || lam <= 0)
		return wl_err_set(err, WL_ECALIB, "the homography is degenerate");
	for (int i = 0; i < 3; i++) {
		m1[i] *= lam;
		m2[i] *= lam;
		m3[i] *= lam;
	}
	cross3(m1, m2, r3);
	for (int i = 0; i < 3; i++) {
		Q[3 * i] = m1[i];
		Q[3 * i + 1] = m2[i];
		Q[3 * i + 2] = r3[i];
	}
	if (!polar(Q, R))
		return wl_err_set(err, WL_ECALIB, "the homography does not give a rotation");
	memcpy(cam->R, R, sizeof R);
	memcpy(cam->t, m3, sizeof m3);
	wl_camera_position(cam, C);
	if (!(C[2] > 0))
		return wl_err_set(err, WL_ECALIB,
		                  "the camera comes out below the floor: the layout looks mirrored "
		                  "(x and y must form a right-handed frame seen from above)");
	return WL_OK;
}

/* ---- DLT of the 3×4 projection ---- */

static int normaliser3(const double *p, int n, double T[16])
{
	double c[3] = {0}, d = 0, s;
	for (int i = 0; i < n; i++)
		for (int k = 0; k < 3; k++)
			c[k] += p[3 * i + k] / n;
	for (int i = 0; i < n; i++)
		d += sqrt(pow(p[3 * i] - c[0], 2) + pow(p[3 * i + 1] - c[1], 2) +
		          pow(p[3 * i + 2] - c[2], 2)) /
		     n;
	if (!(d > 0))
		return 0;
	s = sqrt(3.0) / d;
	memset(T, 0, 16 * sizeof *T);
	for (int k = 0; k < 3; k++) {
		T[5 * k] = s;
		T[4 * k + 3] = -s * c[k];
	}
	T[15] = 1;
	return 1;
}

wl_status wl_pose_from_points3d(const double *xyz, const double *uv, int n, wl_camera *cam, wl_err *err)
{
	double T3[16], T2[9], T2i[9], ata[144], ev[12], V[144], Pn[12], tmp[12], P[12], zmin = INFINITY,
	                                                                                zmax = -INFINITY;
	double S[9] = {0}, cen[3] = {0}, sev[3], sV[9], span = 0;
	double uv2[2 * WL_CALIB_MAX_POINTS];
	if (n < 6)
		return wl_err_set(err, WL_ECALIB, "3-D points: %d given, the projection needs at least 6", n);
	if (n > WL_CALIB_MAX_POINTS)
		return wl_err_set(err, WL_ELIMIT, "3-D points: more than %d", WL_CALIB_MAX_POINTS);
	for (int i = 0; i < n; i++) {
		zmin = fmin(zmin, xyz[3 * i + 2]);
		zmax = fmax(zmax, xyz[3 * i + 2]);
		for (int k = 0; k < 3; k++)
			cen[k] += xyz[3 * i + k] / n;
	}
	for (int i = 0; i < n; i++)
		for (int a = 0; a < 3; a++)
			for (int b = 0; b < 3; b++)
				S[3 * a + b] += (xyz[3 * i + a] - cen[a]) * (xyz[3 * i + b] - cen[b]) / n;
	wl_sym_eig(S, 3, sev, sV);
	span = sqrt(fmax(sev[2], 0));
	if (!(sqrt(fmax(sev[0], 0)) > 0.01 * span))
		return wl_err_set(err, WL_ECALIB,
		                  "3-D points: they lie on one plane: use the homography instead");
	memcpy(uv2, uv, sizeof(double) * 2 * (size_t)n);
	if (!normaliser3(xyz, n, T3))
		return wl_err_set(err, WL_ECALIB, "3-D points coincide");
	{
		/* 2-D normaliser inline (centroid, mean distance √2) */
		double cx = 0, cy = 0, d = 0, s;
		for (int i = 0; i < n; i++) {
			cx += uv[2 * i] / n;
			cy += uv[2 * i + 1] / n;
		}
		for (int i = 0; i < n; i++)
			d += hypot(uv[2 * i] - cx, uv[2 * i + 1] - cy) / n;
		if (!(d > 0))
			return wl_err_set(err, WL_ECALIB, "3-D points: the pixels coincide");
		s = sqrt(2.0) / d;
		double T[9] = {s, 0, -s * cx, 0, s, -s * cy, 0, 0, 1};
		memcpy(T2, T, sizeof T);
	}
	memset(ata, 0, sizeof ata);
	for (int i = 0; i < n; i++) {
		double X[4], x, y, r[2][12];
		for (int k = 0; k < 3; k++)
			X[k] = T3[4 * k + k] * xyz[3 * i + k] + T3[4 * k + 3];
		X[3] = 1;
		x = T2[0] * uv[2 * i] + T2[2];
		y = T2[4] * uv[2 * i + 1] + T2[5];
		for (int k = 0; k < 4; k++) {
			r[0][k] = -X[k];
			r[0][4 + k] = 0;
			r[0][8 + k] = x * X[k];
			r[1][k] = 0;
			r[1][4 + k] = -X[k];
			r[1][8 + k] = y * X[k];
		}
		for (int q = 0; q < 2; q++)
			for (int a = 0; a < 12; a++)
				for (int b = 0; b < 12; b++)
					ata[12 * a + b] += r[q][a] * r[q][b];
	}
	wl_sym_eig(ata, 12, ev, V);
	for (int k = 0; k < 12; k++)
		Pn[k] = V[12 * k];
	/* P = T2^-1 Pn T3 */
	if (!wl_inv3(T2, T2i))
		return wl_err_set(err, WL_ECALIB, "3-D points: normalisation failed");
	wl_mat_mul(T2i, Pn, tmp, 3, 3, 4);
	wl_mat_mul(tmp, T3, P, 3, 4, 4);
	{
		double M[9], A[9], Mt[9], fx, fy, f, Ki[9], Q[9], R[9], sgn, lam, t[3], p4[3];
		for (int r = 0; r < 3; r++) {
			for (int c = 0; c < 3; c++)
				M[3 * r + c] = P[4 * r + c];
			p4[r] = P[4 * r + 3];
		}
		sgn = wl_det3(M) < 0 ? -1 : 1;
		lam = sgn / sqrt(M[6] * M[6] + M[7] * M[7] + M[8] * M[8]);
		for (int i = 0; i < 9; i++)
			M[i] *= lam;
		for (int i = 0; i < 3; i++)
			p4[i] *= lam;
		/* M Mᵀ = K Kᵀ (zero skew): fx² = A00 - cx², fy² = A11 - cy² */
		wl_mat_transpose(M, Mt, 3, 3);
		wl_mul3(M, Mt, A);
		fx = sqrt(fmax(A[0] - A[2] * A[2], 0));
		fy = sqrt(fmax(A[4] - A[5] * A[5], 0));
		f = sqrt(fx * fy);
		if (!(f > 0))
			return wl_err_set(err, WL_ECALIB, "3-D points: the projection gives no focal length");
		if (cam->K[0] <= 1 || cam->K[4] <= 1) {
			/* no intrinsics given: square pixels, principal point at the centre */
			double cx = cam->width_px > 0 ? (cam->width_px - 1) / 2.0 : A[2];
			double cy = cam->height_px > 0 ? (cam->height_px - 1) / 2.0 : A[5];
			wl_camera_init(cam, cam->width_px, cam->height_px, f, f, cx, cy);
		}
		if (!wl_inv3(cam->K, Ki))
			return wl_err_set(err, WL_ECALIB, "camera matrix is singular");
		wl_mul3(Ki, M, Q);
		wl_mul3v(Ki, p4, t);
		if (!polar(Q, R))
			return wl_err_set(err, WL_ECALIB, "3-D points: the projection gives no rotation");
		memcpy(cam->R, R, sizeof R);
		memcpy(cam->t, t, sizeof t);
	}
	(void)zmin;
	(void)zmax;
	return WL_OK;
}

/* ---- Levenberg-Marquardt on the reprojection error ---- */

double wl_pose_refine(wl_camera *cam, const double *xyz, const double *uv, const int *used, int n,
                      unsigned flags)
{
	wl_camfit_opts o;
	wl_camera c = *cam;
	double rms;
	memset(&o, 0, sizeof o);
	o.free = WL_CP_POSE | ((flags & WL_POSE_FOCAL) ? WL_CP_BIT(WL_CP_F) : 0);
	if (!(flags & WL_POSE_WATER))
		c.water_depth_m = 0;
	rms = wl_camfit(&c, xyz, uv, used, n, &o, NULL);
	if (rms < 0)
		return rms;
	c.water_depth_m = cam->water_depth_m;
	*cam = c;
	return rms;
}
