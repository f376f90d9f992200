/*
 * detect.c: floor-marker detection for calibration: AprilTag (the C
 * library we link) on the luma plane of many frames, each marker's centre
 * and corners taken as the per-coordinate median over the frames in which
 * it was seen cleanly (hamming 0, away from the frame edge).  The tracker
 * has its own detector in src/track/; this one stays small.
 *
 * AprilTag puts the centre of pixel 0 at 0.5; wakeline at 0 (camera.h):
 * 0.5 is subtracted here, at the boundary.
 */
#include "calib/detect.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <apriltag.h>
#include <tag16h5.h>
#include <tag25h9.h>
#include <tag36h11.h>
#include <tagStandard41h12.h>

#define EDGE_PX 3.0 /* a corner this close to the frame edge: the tag may be cut (our choice) */

typedef struct {
	long id;
	int n;                              /* observations kept */
	int seen;                           /* frames seen (also beyond the kept ones) */
	double obs[WL_TAGS_MAX_FRAMES][11]; /* c(2), p(8), margin */
} tag_track;

struct wl_calib_tags {
	apriltag_family_t *fam;
	apriltag_detector_t *td;
	void (*fam_destroy)(apriltag_family_t *);
	int frames, n_tags;
	tag_track *tags; /* WL_TAGS_MAX_IDS */
};

static const struct {
	const char *name;
	apriltag_family_t *(*create)(void);
	void (*destroy)(apriltag_family_t *);
} families[] = {
        {"tag36h11", tag36h11_create, tag36h11_destroy},
        {"tag25h9", tag25h9_create, tag25h9_destroy},
        {"tag16h5", tag16h5_create, tag16h5_destroy},
        {"tagStandard41h12", tagStandard41h12_create, tagStandard41h12_destroy},
};

wl_status wl_tag_family(const char *name, apriltag_family_t **fam, void (**destroy)(apriltag_family_t *),
                        wl_err *err)
{
	for (size_t i = 0; i < sizeof families / sizeof families[0]; i++)
		if (strcmp(name, families[i].name) == 0) {
			*fam = families[i].create();
			*destroy = families[i].destroy;
			if (!*fam)
				return wl_err_set(err, WL_ENOMEM, "out of memory creating tag family '%s'",
				                  name);
			return WL_OK;
		}
	return wl_err_set(err, WL_EINVAL,
	                  "tag family '%s' is not known: use tag36h11, tag25h9, tag16h5 or "
	                  "tagStandard41h12",
	                  name);
}

wl_status wl_calib_tags_create(const char *family, wl_calib_tags **out, wl_err *err)
{
	wl_calib_tags *t = calloc(1, sizeof *t);
	wl_status st;
	*out = NULL;
	if (!t)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the tag detector");
	if ((st = wl_tag_family(family, &t->fam, &t->fam_destroy, err))) {
		free(t);
		return st;
	}
	t->td = apriltag_detector_create();
	t->tags = calloc(WL_TAGS_MAX_IDS, sizeof *t->tags);
	if (!t->td || !t->tags) {
		wl_calib_tags_destroy(t);
		return wl_err_set(err, WL_ENOMEM, "out of memory for the tag detector");
	}
	/* one corrected bit keeps the tables small (PITFALLS.md); we reject
	 * corrected detections anyway */
	apriltag_detector_add_family_bits(t->td, t->fam, 1);
	t->td->quad_decimate = 1.0; /* small floor tags matter more than speed here */
	t->td->nthreads = 1;
	t->td->refine_edges = 1;
	*out = t;
	return WL_OK;
}

void wl_calib_tags_destroy(wl_calib_tags *t)
{
	if (!t)
		return;
	if (t->td)
		apriltag_detector_destroy(t->td); /* before the family */
	if (t->fam)
		t->fam_destroy(t->fam);
	free(t->tags);
	free(t);
}

static tag_track *track_of(wl_calib_tags *t, long id)
{
	for (int i = 0; i < t->n_tags; i++)
		if (t->tags[i].id == id)
			return &t->tags[i];
	if (t->n_tags >= WL_TAGS_MAX_IDS)
		return NULL;
	t->tags[t->n_tags].id = id;
	return &t->tags[t->n_tags++];
}

wl_status wl_calib_tags_add(wl_calib_tags *t, const uint8_t *luma, int width_px, int height_px, int stride,
                            int *n_seen, wl_err *err)
{
	image_u8_t im = {width_px, height_px, stride, (uint8_t *)luma};
	zarray_t *dets;
	*n_seen = 0;
	if (width_px < 8 || height_px < 8 || stride < width_px)
		return wl_err_set(err, WL_EINVAL, "tag detection: bad image %dx%d (stride %d)", width_px,
		                  height_px, stride);
	dets = apriltag_detector_detect(t->td, &im);
	if (!dets)
		return wl_err_set(err, WL_ENOMEM, "tag detection failed (out of memory)");
	for (int i = 0; i < zarray_size(dets); i++) {
		apriltag_detection_t *d;
		tag_track *tr;
		int edge = 0;
		zarray_get(dets, i, &d);
		if (d->hamming > 0)
			continue;
		for (int k = 0; k < 4; k++)
			if (d->p[k][0] < EDGE_PX || d->p[k][1] < EDGE_PX || d->p[k][0] > width_px - EDGE_PX ||
			    d->p[k][1] > height_px - EDGE_PX)
				edge = 1;
		if (edge || !(tr = track_of(t, d->id)))
			continue;
		tr->seen++;
		(*n_seen)++;
		if (tr->n >= WL_TAGS_MAX_FRAMES)
			continue;
		double *o = tr->obs[tr->n++];
		o[0] = d->c[0] - 0.5;
		o[1] = d->c[1] - 0.5;
		for (int k = 0; k < 4; k++) {
			o[2 + 2 * k] = d->p[k][0] - 0.5;
			o[3 + 2 * k] = d->p[k][1] - 0.5;
		}
		o[10] = d->decision_margin;
	}
	apriltag_detections_destroy(dets);
	t->frames++;
	return WL_OK;
}

static int cmp_double(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return (x > y) - (x < y);
}

int wl_calib_tags_get(const wl_calib_tags *t, long id, wl_tag_obs *out)
{
	for (int i = 0; i < t->n_tags; i++) {
		const tag_track *tr = &t->tags[i];
		double v[WL_TAGS_MAX_FRAMES], med[11];
		if (tr->id != id || tr->n == 0)
			continue;
		for (int k = 0; k < 11; k++) {
			for (int j = 0; j < tr->n; j++)
				v[j] = tr->obs[j][k];
			qsort(v, (size_t)tr->n, sizeof v[0], cmp_double);
			med[k] = tr->n % 2 ? v[tr->n / 2] : 0.5 * (v[tr->n / 2 - 1] + v[tr->n / 2]);
		}
		out->c[0] = med[0];
		out->c[1] = med[1];
		for (int k = 0; k < 4; k++) {
			out->p[k][0] = med[2 + 2 * k];
			out->p[k][1] = med[3 + 2 * k];
		}
		out->margin = med[10];
		out->frames = tr->seen;
		out->move_px = 0;
		for (int j = 0; j < tr->n; j++)
			out->move_px =
			        fmax(out->move_px, hypot(tr->obs[j][0] - med[0], tr->obs[j][1] - med[1]));
		return 1;
	}
	return 0;
}

int wl_calib_tags_frames(const wl_calib_tags *t)
{
	return t->frames;
}

int wl_calib_tags_ids(const wl_calib_tags *t, long *ids, int max)
{
	int k = 0;
	for (int i = 0; i < t->n_tags && k < max; i++)
		ids[k++] = t->tags[i].id;
	return k;
}
