/*
 * hold.c: holding a tag the detector missed (track.h, "holding a tag").
 *
 * When glare washes over part of a tag or something covers part of it, the
 * AprilTag detector finds no quad, although most of the printed pattern is
 * still there and the robot's pose is predictable to a pixel.  Here the
 * tag's known pattern (its family's code for its id, the white border
 * included) is aligned with the image around the predicted pose:
 *
 *   pose     (x, y, up) on the robot's marker plane: 3 parameters, the tag
 *            moving rigidly on its plane; its corners are the last
 *            detection's, carried with the pose, mapped to pixels through
 *            the calibration, and the card's points through the homography
 *            of those four corners (lens distortion is smooth over a tag);
 *   model    image = a + b * pattern, with the pattern box-filtered over a
 *            pixel's footprint; a and b (black level and contrast) are
 *            fitted with the pose;
 *   search   a coarse grid of shifts and turns around the prediction scored
 *            by correlation, then Gauss-Newton with Tukey's biweight on the
 *            residuals (iteratively reweighted least squares), so pixels
 *            under glare or an occluder weigh nothing;
 *   quality  the fractions of the pattern's dark and light samples that
 *            agree with the fit, and their harmonic mean as the score: a
 *            hidden tag (a flat patch agrees with one side at most) scores
 *            near 0, a half-covered one about 1/2.
 *
 * Nothing here allocates per call; a wl_tagmodel is a few tens of KB.
 */
#include "track/track.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/angle.h"
#include "core/linalg.h"

#define SPC 4     /* samples per cell and side */
#define MAX_TW 12 /* largest total_width of the supported families (tag36h11: 10) */
#define MAX_SAMPLES (SPC * MAX_TW * SPC * MAX_TW)
#define COARSE_STRIDE 3 /* every third sample in the coarse search */
#define MAX_ITER 25
#define TUKEY_C 4.685   /* 95 % efficiency at the normal (Tukey's biweight) */
#define MIN_SIGMA 2.0   /* grey levels: the noise scale never drops below this */
#define EDGE_FRAC 0.05  /* ... nor below this fraction of the contrast */
#define MAX_FRAC 0.1    /* ... and never rises above this fraction of it */
#define AGREE_FRAC 0.25 /* a sample agrees with the fit within this fraction of the contrast */
#define WL_MIN(a, b) ((a) < (b) ? (a) : (b))
#define NCAND 3       /* places of the coarse search refined */
#define CAND_SEP 0.25 /* ... at least this many tag sides apart */

struct wl_tagmodel {
	int tw, wab; /* cells across the card, and across the black square's outer edge */
	unsigned char cells[MAX_TW * MAX_TW];
	unsigned char data[MAX_TW * MAX_TW]; /* 1: the cell carries a bit of the code */
	int n;                               /* samples */
	double a[MAX_SAMPLES]; /* tag coordinates (AprilTag's: x right, y down, +-1 at the black square's
	                          edge) */
	double b[MAX_SAMPLES];
	float T[MAX_SAMPLES];                    /* the pattern there, 0 black .. 1 white (box-filtered) */
	double blur;                             /* the footprint T was filtered with, in tag coordinates */
	double r[MAX_SAMPLES], tmp[MAX_SAMPLES]; /* scratch of a fit */
};

wl_status wl_tagmodel_create(const char *family, int id, wl_tagmodel **out, wl_err *err)
{
	wl_tagmodel *m = calloc(1, sizeof *m);
	*out = NULL;
	if (!m)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the tag model");
	m->tw = wl_tagdet_render_cells(family, id, m->cells, (int)sizeof m->cells);
	m->wab = wl_tagdet_border_width(family);
	if (m->tw <= 0 || m->tw > MAX_TW || m->wab <= 0 ||
	    wl_tagdet_data_cells(family, m->data, (int)sizeof m->data) != m->tw) {
		free(m);
		return wl_err_set(err, WL_EINVAL, "no tag model for id %d of family '%s'", id, family);
	}
	m->blur = -1;
	*out = m;
	return WL_OK;
}

void wl_tagmodel_destroy(wl_tagmodel *m)
{
	free(m);
}

/* the printed pattern at tag coordinates (a, b): 1 white, 0 black */
static double cell_at(const wl_tagmodel *m, double a, double b)
{
	double cell = 2.0 / m->wab, half = 0.5 * m->tw;
	int c = (int)floor(a / cell + half), r = (int)floor(b / cell + half);
	if (c < 0 || r < 0 || c >= m->tw || r >= m->tw)
		return 1.0;
	return m->cells[r * m->tw + c];
}

/* (Re)builds the samples with the pattern box-filtered over `blur` tag units
 * (about one pixel): a sharp pattern would give the fit no gradient. */
static void build_samples(wl_tagmodel *m, double blur)
{
	int per = SPC * m->tw;
	double half = (double)m->tw / m->wab, step = 2.0 * half / per;
	m->n = 0;
	for (int j = 0; j < per; j++)
		for (int i = 0; i < per; i++) {
			double a = -half + (i + 0.5) * step, b = -half + (j + 0.5) * step, s = 0;
			for (int q = 0; q < 4; q++)
				for (int p = 0; p < 4; p++)
					s += cell_at(m, a + blur * ((p + 0.5) / 4 - 0.5),
					             b + blur * ((q + 0.5) / 4 - 0.5));
			m->a[m->n] = a;
			m->b[m->n] = b;
			m->T[m->n] = (float)(s / 16);
			m->n++;
		}
	m->blur = blur;
}

/* ---- geometry: pose -> homography of tag coordinates to pixels ---- */

typedef struct {
	double a, b, c, d, e, f, g, h; /* x = (a s + b t + c) / (g s + h t + 1), likewise y */
} quadmap;

/* The projective map of the unit square (0,0),(1,0),(1,1),(0,1) onto the
 * quad q0..q3 (Heckbert, "Fundamentals of Texture Mapping and Image
 * Warping", 1989, sec. 2.2.3).  Returns 0 for a degenerate quad. */
static int square_to_quad(double q[4][2], quadmap *m)
{
	double dx1 = q[1][0] - q[2][0], dx2 = q[3][0] - q[2][0], dx3 = q[0][0] - q[1][0] + q[2][0] - q[3][0];
	double dy1 = q[1][1] - q[2][1], dy2 = q[3][1] - q[2][1], dy3 = q[0][1] - q[1][1] + q[2][1] - q[3][1];
	double det = dx1 * dy2 - dx2 * dy1;
	if (fabs(det) < 1e-12)
		return 0;
	m->g = (dx3 * dy2 - dx2 * dy3) / det;
	m->h = (dx1 * dy3 - dx3 * dy1) / det;
	m->a = q[1][0] - q[0][0] + m->g * q[1][0];
	m->b = q[3][0] - q[0][0] + m->h * q[3][0];
	m->c = q[0][0];
	m->d = q[1][1] - q[0][1] + m->g * q[1][1];
	m->e = q[3][1] - q[0][1] + m->h * q[3][1];
	m->f = q[0][1];
	return 1;
}

/* tag coordinates (x right, y down, +-1 at the corners) -> pixels */
static inline void map_tag(const quadmap *m, double ta, double tb, double *u, double *v)
{
	double s = 0.5 * (ta + 1), t = 0.5 * (tb + 1), w = m->g * s + m->h * t + 1;
	*u = (m->a * s + m->b * t + m->c) / w;
	*v = (m->d * s + m->e * t + m->f) / w;
}

typedef struct {
	const double (*L)[2]; /* corners relative to the centre, in the frame of up */
	wl_plane_to_px_fn f;
	const void *ctx;
} geom;

/* The unit square's corners (0,0),(1,0),(1,1),(0,1) are the tag coordinates
 * (-1,-1),(1,-1),(1,1),(-1,1): AprilTag's corners p3, p2, p1, p0. */
static int pose_map(const geom *g, const wl_tagpose *p, quadmap *m, double px_corners[4][2])
{
	static const int order[4] = {3, 2, 1, 0};
	double c = cos(p->up_rad), s = sin(p->up_rad), q[4][2];
	for (int k = 0; k < 4; k++) {
		const double *l = g->L[order[k]];
		double x = p->x_m + c * l[0] - s * l[1], y = p->y_m + s * l[0] + c * l[1];
		if (!g->f(g->ctx, x, y, &q[k][0], &q[k][1]))
			return 0;
		if (px_corners) {
			px_corners[order[k]][0] = q[k][0];
			px_corners[order[k]][1] = q[k][1];
		}
	}
	return square_to_quad(q, m);
}

/* ---- image sampling ---- */

typedef struct {
	const uint8_t *img;
	int stride;
	int x0, y0, x1, y1; /* the readable area: x0 <= u < x1 */
} view;

/* bilinear sample at (u, v), pixel centres at integers; 0 outside */
static inline int sample(const view *vw, double u, double v, double *out)
{
	int iu = (int)floor(u), iv = (int)floor(v);
	double fu, fv;
	const uint8_t *p;
	if (iu < vw->x0 || iv < vw->y0 || iu + 1 >= vw->x1 || iv + 1 >= vw->y1)
		return 0;
	fu = u - iu;
	fv = v - iv;
	p = vw->img + (size_t)iv * vw->stride + iu;
	*out = (1 - fv) * ((1 - fu) * p[0] + fu * p[1]) +
	       fv * ((1 - fu) * p[vw->stride] + fu * p[vw->stride + 1]);
	return 1;
}

/* The black level ab[0] and contrast ab[1] by least squares of the image
 * against the pattern over every `stride`-th sample; 0 when too few. */
static int fit_levels(const wl_tagmodel *m, const quadmap *qm, const view *vw, int stride, double ab[2])
{
	double s1 = 0, sT = 0, sTT = 0, sI = 0, sIT = 0;
	for (int i = 0; i < m->n; i += stride) {
		double u, v, I;
		map_tag(qm, m->a[i], m->b[i], &u, &v);
		if (!sample(vw, u, v, &I))
			continue;
		s1++;
		sT += m->T[i];
		sTT += m->T[i] * m->T[i];
		sI += I;
		sIT += I * m->T[i];
	}
	if (s1 < 10 || s1 * sTT - sT * sT <= 0)
		return 0;
	ab[1] = (s1 * sIT - sT * sI) / (s1 * sTT - sT * sT);
	ab[0] = (sI - ab[1] * sT) / s1;
	return 1;
}

/* Pearson correlation of the image with the pattern over every `stride`-th
 * sample at pose p; -2 when too few samples are readable. */
static double corr_at(const wl_tagmodel *m, const geom *g, const view *vw, const wl_tagpose *p, int stride)
{
	quadmap qm;
	double sI = 0, sT = 0, sII = 0, sTT = 0, sIT = 0, n = 0, vI, vT;
	if (!pose_map(g, p, &qm, NULL))
		return -2;
	for (int i = 0; i < m->n; i += stride) {
		double u, v, I, T = m->T[i];
		map_tag(&qm, m->a[i], m->b[i], &u, &v);
		if (!sample(vw, u, v, &I))
			continue;
		sI += I;
		sT += T;
		sII += I * I;
		sTT += T * T;
		sIT += I * T;
		n++;
	}
	if (n < 0.25 * m->n / stride)
		return -2;
	vI = sII - sI * sI / n;
	vT = sTT - sT * sT / n;
	if (vI <= 0 || vT <= 0)
		return 0;
	return (sIT - sI * sT / n) / sqrt(vI * vT);
}

/* The agreement of the image with the pattern at pose p given its levels
 * ab: the harmonic mean of the fractions of dark and of light samples
 * (every `stride`-th) within AGREE_FRAC of the contrast.  Unlike the
 * correlation it is not pulled by glare or an occluder's edge; -2 when
 * too few samples are readable. */
static double agree_at(const wl_tagmodel *m, const geom *g, const view *vw, const wl_tagpose *p,
                       const double ab[2], int stride)
{
	quadmap qm;
	double cut = AGREE_FRAC * ab[1], nd = 0, nl = 0, ad = 0, al = 0, n = 0, fd, fl;
	if (!pose_map(g, p, &qm, NULL))
		return -2;
	for (int i = 0; i < m->n; i += stride) {
		double u, v, I, T = m->T[i];
		int dark = T < 0.5;
		nd += dark;
		nl += !dark;
		map_tag(&qm, m->a[i], m->b[i], &u, &v);
		if (!sample(vw, u, v, &I))
			continue;
		n++;
		if (fabs(I - ab[0] - ab[1] * T) <= cut) {
			ad += dark;
			al += !dark;
		}
	}
	if (n < 0.25 * m->n / stride || nd < 1 || nl < 1)
		return -2;
	fd = ad / nd;
	fl = al / nl;
	return fd + fl > 0 ? 2 * fd * fl / (fd + fl) : 0;
}

static int cmp_double(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return x < y ? -1 : x > y;
}

/* Gauss-Newton from p, then the quality at the pose reached (see the top). */
static int refine(wl_tagmodel *m, const geom *gp, const view *vwp, double side, double mpp,
                  const double ab[2], wl_tagpose p, wl_tagpose *out, wl_tagfit *fit)
{
	geom g = *gp;
	view vw = *vwp;
	double pc[4][2], eps[3];
	double *r = m->r, *tmp = m->tmp;
	double alpha = 0, beta = 0, sigma = 0;
	quadmap qm;
	int it;
	memset(fit, 0, sizeof *fit);
	/* Gauss-Newton with Tukey weights on (x, y, up, alpha, beta) */
	eps[0] = eps[1] = 0.25 * mpp;
	eps[2] = 0.25 / side;
	for (it = 0; it < MAX_ITER; it++) {
		quadmap qd[3];
		double A[25], B[5], step_px;
		int nr = 0;
		if (!pose_map(&g, &p, &qm, NULL))
			return 0;
		for (int k = 0; k < 3; k++) {
			wl_tagpose q = p;
			if (k == 0)
				q.x_m += eps[0];
			else if (k == 1)
				q.y_m += eps[1];
			else
				q.up_rad += eps[2];
			if (!pose_map(&g, &q, &qd[k], NULL))
				return 0;
		}
		memset(A, 0, sizeof A);
		memset(B, 0, sizeof B);
		if (it == 0 && ab && ab[1] > 0) {
			alpha = ab[0];
			beta = ab[1];
		} else if (it == 0) {
			/* alpha, beta by least squares at the start pose */
			double lv[2];
			if (!fit_levels(m, &qm, &vw, 1, lv))
				return 0;
			alpha = lv[0];
			beta = lv[1];
		}
		/* residuals and the robust scale */
		for (int i = 0; i < m->n; i++) {
			double u, v, I;
			map_tag(&qm, m->a[i], m->b[i], &u, &v);
			if (!sample(&vw, u, v, &I)) {
				r[i] = NAN;
				continue;
			}
			r[i] = I - alpha - beta * m->T[i];
			tmp[nr++] = fabs(r[i]);
		}
		if (nr < 10)
			return 0;
		qsort(tmp, (size_t)nr, sizeof *tmp, cmp_double);
		sigma = 1.4826 * tmp[nr / 2];
		/* the pattern's blur never matches the image's exactly: edges keep
		 * residuals of a few percent of the contrast, which must not count
		 * as outliers (they would pull the fit off one side) */
		if (sigma > MAX_FRAC * fabs(beta))
			sigma = MAX_FRAC * fabs(beta); /* the MAD breaks down when half is covered */
		if (sigma < MIN_SIGMA)
			sigma = MIN_SIGMA;
		if (sigma < EDGE_FRAC * fabs(beta))
			sigma = EDGE_FRAC * fabs(beta);
		for (int i = 0; i < m->n; i++) {
			double u, v, gu, gv, I1, I2, J[5], w, z;
			if (isnan(r[i]))
				continue;
			z = r[i] / (TUKEY_C * sigma);
			w = fabs(z) < 1 ? (1 - z * z) * (1 - z * z) : 0;
			if (w <= 0)
				continue;
			map_tag(&qm, m->a[i], m->b[i], &u, &v);
			if (!sample(&vw, u + 0.5, v, &I1) || !sample(&vw, u - 0.5, v, &I2))
				continue;
			gu = I1 - I2;
			if (!sample(&vw, u, v + 0.5, &I1) || !sample(&vw, u, v - 0.5, &I2))
				continue;
			gv = I1 - I2;
			for (int k = 0; k < 3; k++) {
				double uk, vk;
				map_tag(&qd[k], m->a[i], m->b[i], &uk, &vk);
				J[k] = (gu * (uk - u) + gv * (vk - v)) / eps[k];
			}
			J[3] = 1;
			J[4] = m->T[i];
			for (int a = 0; a < 5; a++) {
				for (int b = 0; b < 5; b++)
					A[a * 5 + b] += w * J[a] * J[b];
				B[a] += w * J[a] * r[i];
			}
		}
		/* a little damping keeps the steps short where the pattern is flat */
		for (int a = 0; a < 5; a++)
			A[a * 5 + a] *= 1.0 + 1e-6;
		if (!wl_solve(A, B, 5))
			return 0;
		/* J holds +1 and +T for alpha and beta (their derivatives are -1 and
		 * -T): the Gauss-Newton step is -B for the pose, +B for them */
		p.x_m -= B[0];
		p.y_m -= B[1];
		p.up_rad -= B[2];
		alpha += B[3];
		beta += B[4];
		step_px = hypot(B[0], B[1]) / mpp + fabs(B[2]) * side;
		if (step_px > 3 * side)
			return 0; /* running away: nothing like the tag here */
		if (step_px < 0.002)
			break;
	}
	/* quality at the final pose: the samples that agree with the fit (within
	 * AGREE_FRAC of the contrast: edge mismatch and noise stay inside, glare
	 * and anything covering the tag do not), counted apart on the dark and
	 * the light side of the pattern: a flat patch agrees with one side at
	 * most, a tag in view with both; the score is the harmonic mean of the
	 * two fractions (samples off the image disagree) */
	{
		double cut = fmax(AGREE_FRAC * fabs(beta), 2.5 * sigma), n = 0, sI = 0, sT = 0, sII = 0,
		       sTT = 0, sIT = 0, vI, vT, u, v, I, nd = 0, nl = 0, ad = 0, al = 0;
		if (!pose_map(&g, &p, &qm, pc))
			return 0;
		for (int i = 0; i < m->n; i++) {
			double T = m->T[i];
			int dark = T < 0.5, agree;
			nd += dark;
			nl += !dark;
			map_tag(&qm, m->a[i], m->b[i], &u, &v);
			agree = sample(&vw, u, v, &I) && fabs(I - alpha - beta * T) <= cut;
			if (!agree)
				continue;
			ad += dark;
			al += !dark;
			n++;
			sI += I;
			sT += T;
			sII += I * I;
			sTT += T * T;
			sIT += I * T;
		}
		if (n < 10 || nd < 1 || nl < 1)
			return 0;
		vI = sII - sI * sI / n;
		vT = sTT - sT * sT / n;
		fit->corr = vI > 0 && vT > 0 ? (sIT - sI * sT / n) / sqrt(vI * vT) : 0;
		fit->frac = n / m->n;
		fit->frac_dark = ad / nd;
		fit->frac_light = al / nl;
		fit->score = ad > 0 && al > 0 ? 2 * fit->frac_dark * fit->frac_light /
		                                        (fit->frac_dark + fit->frac_light)
		                              : 0;
		/* the code itself: every other tag of the family shares the border,
		 * and half of any two codes' bits agree, so the pattern's agreement
		 * alone cannot tell this tag from another; read the centre of each
		 * code cell (the mean of its four central samples) and compare.  A
		 * dark occluder turns light bits dark, glare dark bits light; only
		 * another tag gets both kinds wrong. */
		{
			int per = SPC * m->tw, bits_read = 0, bits_total = 0, wrong_dark = 0, wrong_light = 0;
			int n_dark = 0, ok_dark = 0, ok_light = 0;
			for (int cr = 0; cr < m->tw; cr++)
				for (int cc = 0; cc < m->tw; cc++) {
					double sum = 0, mean;
					int ns = 0;
					if (!m->data[cr * m->tw + cc])
						continue;
					bits_total++;
					n_dark += !m->cells[cr * m->tw + cc];
					for (int j = SPC / 2 - 1; j <= SPC / 2; j++)
						for (int i = SPC / 2 - 1; i <= SPC / 2; i++) {
							int si = (cr * SPC + j) * per + cc * SPC + i;
							map_tag(&qm, m->a[si], m->b[si], &u, &v);
							if (sample(&vw, u, v, &I)) {
								sum += I;
								ns++;
							}
						}
					if (ns < 4)
						continue;
					mean = sum / ns;
					if (fabs(mean - alpha) <= cut || fabs(mean - alpha - beta) <= cut) {
						int light = fabs(mean - alpha - beta) < fabs(mean - alpha);
						bits_read++;
						wrong_dark += !light && m->cells[cr * m->tw + cc];
						wrong_light += light && !m->cells[cr * m->tw + cc];
						ok_dark += !light && !m->cells[cr * m->tw + cc];
						ok_light += light && m->cells[cr * m->tw + cc];
					}
				}
			fit->bits_read = bits_read;
			fit->bits_wrong = wrong_dark + wrong_light;
			fit->bits_wrong_dark = wrong_dark;
			fit->bits_wrong_light = wrong_light;
			fit->bits_dark = n_dark;
			fit->bits_ok_dark = ok_dark;
			fit->bits_ok_light = ok_light;
			fit->bits_total = bits_total;
		}
		fit->contrast = beta;
		fit->sigma = sigma;
		map_tag(&qm, 0, 0, &fit->u_px, &fit->v_px);
		side = 0;
		for (int k = 0; k < 4; k++) {
			side += hypot(pc[(k + 1) % 4][0] - pc[k][0], pc[(k + 1) % 4][1] - pc[k][1]);
			fit->corners_px[k][0] = pc[k][0];
			fit->corners_px[k][1] = pc[k][1];
		}
		fit->side_px = side / 4;
		fit->iterations = it + 1;
	}
	*out = p;
	return 1;
}

int wl_tagmodel_fit(wl_tagmodel *m, const double corners[4][2], wl_plane_to_px_fn f, const void *ctx,
                    const uint8_t *img, int stride, const int area[4], const wl_tagpose *guess,
                    const double ab[2], double search_px, wl_tagpose *out, wl_tagfit *fit)
{
	geom g = {corners, f, ctx};
	view vw = {img, stride, area[0], area[1], area[0] + area[2], area[1] + area[3]};
	double pc[4][2], side = 0, mpp, cs[NCAND];
	wl_tagpose cand[NCAND];
	quadmap qm;
	int nc = 0, nsteps, got = 0;
	memset(fit, 0, sizeof *fit);
	*out = *guess;
	if (!pose_map(&g, guess, &qm, pc))
		return 0;
	for (int k = 0; k < 4; k++)
		side += hypot(pc[(k + 1) % 4][0] - pc[k][0], pc[(k + 1) % 4][1] - pc[k][1]);
	side /= 4;
	if (!(side >= 4))
		return 0;
	/* the pattern blurred over about a pixel (2 tag units span `side` px) */
	if (fabs(m->blur - 2.0 / side) > 0.25 * m->blur)
		build_samples(m, 2.0 / side);
	/* metres per pixel on the plane, from the corners' spread */
	mpp = hypot(corners[1][0] - corners[0][0], corners[1][1] - corners[0][1]) / side;
	/* coarse search: shifts on a 1 px grid and three turns, scored by the
	 * agreement with the pattern at the levels given (by correlation
	 * without them); the NCAND best places a quarter side apart are
	 * refined (a tag partly covered can score best somewhat off its place) */
	cand[nc] = *guess;
	cs[nc++] = -3;
	nsteps = (int)ceil(search_px);
	if (nsteps > 0) {
		nc = 0;
		for (int a = -1; a <= 1; a++)
			for (int dy = -nsteps; dy <= nsteps; dy++)
				for (int dx = -nsteps; dx <= nsteps; dx++) {
					wl_tagpose q = {guess->x_m + dx * mpp, guess->y_m + dy * mpp,
					                guess->up_rad + 4 * WL_DEG * a};
					double c = ab && ab[1] > 0
					                   ? agree_at(m, &g, &vw, &q, ab, COARSE_STRIDE)
					                   : corr_at(m, &g, &vw, &q, COARSE_STRIDE);
					int near = -1, k;
					if (c <= -2)
						continue;
					for (k = 0; k < nc; k++)
						if (hypot(cand[k].x_m - q.x_m, cand[k].y_m - q.y_m) <
						    CAND_SEP * side * mpp)
							near = k;
					if (near >= 0) {
						if (c > cs[near]) {
							cs[near] = c;
							cand[near] = q;
						}
						continue;
					}
					if (nc < NCAND) {
						cs[nc] = c;
						cand[nc++] = q;
						continue;
					}
					for (k = 0, near = 0; k < nc; k++)
						if (cs[k] < cs[near])
							near = k;
					if (c > cs[near]) {
						cs[near] = c;
						cand[near] = q;
					}
				}
		if (nc == 0)
			return 0;
	}
	/* the refined candidate whose code reads best (fewest bits wrong both
	 * ways), then scores best */
	for (int k = 0; k < nc; k++) {
		wl_tagpose p;
		wl_tagfit fk;
		double wk, wb;
		if (!refine(m, &g, &vw, side, mpp, ab, cand[k], &p, &fk) ||
		    hypot(p.x_m - cand[k].x_m, p.y_m - cand[k].y_m) > 0.25 * side * mpp + 2 * mpp)
			continue;
		wk = fk.bits_read ? (double)WL_MIN(fk.bits_wrong_dark, fk.bits_wrong_light) / fk.bits_read
		                  : 1;
		wb = fit->bits_read
		             ? (double)WL_MIN(fit->bits_wrong_dark, fit->bits_wrong_light) / fit->bits_read
		             : 1;
		if (!got || wk < wb - 1e-9 || (wk < wb + 1e-9 && fk.score > fit->score)) {
			*fit = fk;
			*out = p;
			got = 1;
		}
	}
	return got;
}

int wl_tagmodel_levels(wl_tagmodel *m, const double corners_px[4][2], const uint8_t *img, int stride,
                       const int area[4], double ab[2])
{
	view vw = {img, stride, area[0], area[1], area[0] + area[2], area[1] + area[3]};
	double q[4][2], side = 0;
	static const int order[4] = {3, 2, 1, 0};
	quadmap qm;
	for (int k = 0; k < 4; k++) {
		q[k][0] = corners_px[order[k]][0];
		q[k][1] = corners_px[order[k]][1];
		side += hypot(corners_px[(k + 1) % 4][0] - corners_px[k][0],
		              corners_px[(k + 1) % 4][1] - corners_px[k][1]);
	}
	side /= 4;
	if (!(side >= 4) || !square_to_quad(q, &qm))
		return 0;
	if (fabs(m->blur - 2.0 / side) > 0.25 * m->blur)
		build_samples(m, 2.0 / side);
	return fit_levels(m, &qm, &vw, COARSE_STRIDE, ab);
}
