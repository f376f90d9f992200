/*
 * tagdet.c: the AprilTag back end of the tracker (track.h): a detector per
 * thread, run on a window of the luma plane through an image_u8_t view (no
 * copy), with detections converted to our pixel convention.
 *
 * AprilTag 3 puts the centre of pixel 0 at 0.5 (pixel i covers [i, i+1));
 * camera.h puts it at 0.  The conversion (subtract 0.5, add the window
 * origin) happens here and nowhere else; test_track checks it on a drawn tag.
 */
#include "track/track.h"

#include <stdlib.h>
#include <string.h>

#include <apriltag/apriltag.h>
#include <apriltag/tag16h5.h>
#include <apriltag/tag25h9.h>
#include <apriltag/tag36h11.h>
#include <apriltag/tagCircle21h7.h>
#include <apriltag/tagStandard41h12.h>

struct wl_tagdet {
	apriltag_detector_t *td;
	apriltag_family_t *fam;
	void (*fam_destroy)(apriltag_family_t *);
};

typedef struct {
	const char *name;
	apriltag_family_t *(*create)(void);
	void (*destroy)(apriltag_family_t *);
} family_entry;

static const family_entry families[] = {
        {"tag36h11", tag36h11_create, tag36h11_destroy},
        {"tag25h9", tag25h9_create, tag25h9_destroy},
        {"tag16h5", tag16h5_create, tag16h5_destroy},
        {"tagStandard41h12", tagStandard41h12_create, tagStandard41h12_destroy},
        {"tagCircle21h7", tagCircle21h7_create, tagCircle21h7_destroy},
};

static const family_entry *find_family(const char *name)
{
	for (size_t i = 0; i < sizeof families / sizeof families[0]; i++)
		if (strcmp(families[i].name, name) == 0)
			return &families[i];
	return NULL;
}

wl_status wl_tagdet_create(const char *family, int bits_corrected, wl_tagdet **out, wl_err *err)
{
	const family_entry *fe = find_family(family);
	wl_tagdet *d;
	*out = NULL;
	if (!fe)
		return wl_err_set(err, WL_EINVAL,
		                  "unknown tag family '%s': use tag36h11, tag25h9, tag16h5, tagStandard41h12 "
		                  "or tagCircle21h7",
		                  family);
	d = calloc(1, sizeof *d);
	if (!d)
		return wl_err_set(err, WL_ENOMEM, "out of memory creating the tag detector");
	d->fam = fe->create();
	d->fam_destroy = fe->destroy;
	d->td = d->fam ? apriltag_detector_create() : NULL;
	if (!d->td) {
		wl_tagdet_destroy(d);
		return wl_err_set(err, WL_ENOMEM, "out of memory creating the tag detector");
	}
	/* 0 or 1 corrected bits keeps the decode table small (Debian 3.3) */
	apriltag_detector_add_family_bits(d->td, d->fam,
	                                  bits_corrected < 0   ? 0
	                                  : bits_corrected > 2 ? 2
	                                                       : bits_corrected);
	d->td->nthreads = 1;
	d->td->refine_edges = 1;
	wl_tagdet_set(d, 2.0f, 0.0f, 0.25);
	*out = d;
	return WL_OK;
}

void wl_tagdet_set(wl_tagdet *d, float decimate, float sigma, double sharpening)
{
	d->td->quad_decimate = decimate < 1.0f ? 1.0f : decimate;
	d->td->quad_sigma = sigma;
	d->td->decode_sharpening = sharpening;
}

int wl_tagdet_detect(wl_tagdet *d, const uint8_t *img, int stride, int x0, int y0, int w, int h,
                     wl_tagdet_hit *hits, int max)
{
	/* the view shares the caller's rows: buf points at the window's first
	 * pixel, the stride stays the frame's; AprilTag only reads it */
	image_u8_t view = {.width = w,
	                   .height = h,
	                   .stride = stride,
	                   .buf = (uint8_t *)(uintptr_t)(img + (size_t)y0 * stride + x0)};
	zarray_t *dets;
	int n = 0;
	if (w < 8 || h < 8)
		return 0;
	dets = apriltag_detector_detect(d->td, &view);
	if (!dets)
		return -1;
	for (int i = 0; i < zarray_size(dets) && n < max; i++) {
		apriltag_detection_t *det;
		wl_tagdet_hit *o = &hits[n++];
		zarray_get(dets, i, &det);
		o->id = det->id;
		o->hamming = det->hamming;
		o->margin = det->decision_margin;
		o->c[0] = det->c[0] - 0.5 + x0;
		o->c[1] = det->c[1] - 0.5 + y0;
		for (int k = 0; k < 4; k++) {
			o->p[k][0] = det->p[k][0] - 0.5 + x0;
			o->p[k][1] = det->p[k][1] - 0.5 + y0;
		}
	}
	apriltag_detections_destroy(dets);
	return n;
}

void wl_tagdet_destroy(wl_tagdet *d)
{
	if (!d)
		return;
	/* the detector first, then the family it points to */
	if (d->td)
		apriltag_detector_destroy(d->td);
	if (d->fam)
		d->fam_destroy(d->fam);
	free(d);
}

int wl_tagdet_render_cells(const char *family, int id, unsigned char *cells, int max_cells)
{
	const family_entry *fe = find_family(family);
	apriltag_family_t *f;
	int tw, wb, ws, bs;
	if (!fe || !(f = fe->create()))
		return 0;
	tw = f->total_width;
	if (id < 0 || (uint32_t)id >= f->ncodes || tw * tw > max_cells) {
		fe->destroy(f);
		return 0;
	}
	/* the layout of AprilTag's own apriltag_to_image() */
	memset(cells, 0, (size_t)tw * tw);
	wb = f->width_at_border + (f->reversed_border ? 0 : 2);
	ws = (tw - wb) / 2;
	for (int i = 0; i < wb - 1; i++) {
		cells[ws * tw + ws + i] = 1;
		cells[(ws + i) * tw + tw - 1 - ws] = 1;
		cells[(tw - ws - 1) * tw + ws + i + 1] = 1;
		cells[(ws + 1 + i) * tw + ws] = 1;
	}
	bs = (tw - f->width_at_border) / 2;
	for (uint32_t i = 0; i < f->nbits; i++)
		if (f->codes[id] & ((uint64_t)1 << (f->nbits - i - 1)))
			cells[(f->bit_y[i] + bs) * tw + f->bit_x[i] + bs] = 1;
	fe->destroy(f);
	return tw;
}

int wl_tagdet_border_width(const char *family)
{
	const family_entry *fe = find_family(family);
	apriltag_family_t *f;
	int wab;
	if (!fe || !(f = fe->create()))
		return 0;
	wab = f->width_at_border;
	fe->destroy(f);
	return wab;
}

int wl_tagdet_data_cells(const char *family, unsigned char *mask, int max_cells)
{
	const family_entry *fe = find_family(family);
	apriltag_family_t *f;
	int tw, bs;
	if (!fe || !(f = fe->create()))
		return 0;
	tw = f->total_width;
	if (tw * tw > max_cells) {
		fe->destroy(f);
		return 0;
	}
	/* the cells apriltag_to_image() puts the code's bits in */
	memset(mask, 0, (size_t)tw * tw);
	bs = (tw - f->width_at_border) / 2;
	for (uint32_t i = 0; i < f->nbits; i++)
		mask[(f->bit_y[i] + bs) * tw + f->bit_x[i] + bs] = 1;
	fe->destroy(f);
	return tw;
}
