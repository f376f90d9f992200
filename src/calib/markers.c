/*
 * markers.c: marker sheets at exact scale (see markers.h).  The bit
 * patterns come from the AprilTag library (apriltag_to_image), drawn as
 * merged runs of black cells so that no seam shows between cells.
 */
#include "calib/markers.h"

#include <cairo.h>
#include <cairo-pdf.h>
#include <cairo-svg.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <strings.h>

#include <apriltag.h>
#include <common/image_u8.h>

#include "calib/detect.h"
#include "core/afile.h"

#define MARGIN_MM 10.0
#define LABEL_MM 9.0
#define GAP_MM 8.0
#define BAR_MM 100.0
#define FOOT_MM 22.0 /* room for the scale bar */

typedef enum { FMT_SVG, FMT_PDF, FMT_PNG } fmt_t;

static cairo_status_t write_fp(void *closure, const unsigned char *data, unsigned int len)
{
	return fwrite(data, 1, len, closure) == len ? CAIRO_STATUS_SUCCESS : CAIRO_STATUS_WRITE_ERROR;
}

/* One tag with its quiet zone, top-left corner at (x, y) mm. */
static void draw_tag(cairo_t *cr, const image_u8_t *im, double x, double y, double cell)
{
	cairo_set_source_rgb(cr, 1, 1, 1);
	cairo_rectangle(cr, x, y, im->width * cell, im->height * cell);
	cairo_fill(cr);
	cairo_set_source_rgb(cr, 0, 0, 0);
	for (int r = 0; r < im->height; r++) {
		int c = 0;
		while (c < im->width) {
			int c0;
			if (im->buf[r * im->stride + c]) {
				c++;
				continue;
			}
			c0 = c;
			while (c < im->width && !im->buf[r * im->stride + c])
				c++;
			cairo_rectangle(cr, x + c0 * cell, y + r * cell, (c - c0) * cell, cell);
		}
	}
	cairo_fill(cr);
}

static void draw_scale_bar(cairo_t *cr, double x, double y)
{
	char txt[96];
	cairo_set_source_rgb(cr, 0, 0, 0);
	cairo_set_line_width(cr, 0.3);
	cairo_move_to(cr, x, y);
	cairo_line_to(cr, x + BAR_MM, y);
	for (int i = 0; i <= 10; i++) {
		cairo_move_to(cr, x + i * BAR_MM / 10, y);
		cairo_line_to(cr, x + i * BAR_MM / 10, y - (i % 5 ? 2 : 4));
	}
	cairo_stroke(cr);
	cairo_set_font_size(cr, 3.5);
	snprintf(txt, sizeof txt, "%.0f mm: check this bar with a ruler; print at 100%% (no fit to page)",
	         BAR_MM);
	cairo_move_to(cr, x, y + 5);
	cairo_show_text(cr, txt);
}

static void draw_label(cairo_t *cr, const char *family, long id, double size_mm, double x, double y)
{
	char txt[128];
	cairo_set_source_rgb(cr, 0, 0, 0);
	cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_BOLD);
	cairo_set_font_size(cr, 4.5);
	snprintf(txt, sizeof txt, "%s id %ld", family, id);
	cairo_move_to(cr, x, y);
	cairo_show_text(cr, txt);
	cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
	cairo_set_font_size(cr, 3.2);
	snprintf(txt, sizeof txt, "black square %.1f mm; this edge is the tag's top", size_mm);
	cairo_move_to(cr, x, y + 4.2);
	cairo_show_text(cr, txt);
}

wl_status wl_markers_render(const char *path, const wl_markers_opts *o, wl_err *err)
{
	struct apriltag_family *fam = NULL;
	void (*fam_destroy)(struct apriltag_family *) = NULL;
	const char *dot = strrchr(path, '.');
	double pw = o->page_w_mm > 0 ? o->page_w_mm : 210, ph = o->page_h_mm > 0 ? o->page_h_mm : 297;
	double dpi = o->dpi > 0 ? o->dpi : 300, cell, tag_mm, cw, chh, sheet_h;
	int cols, rows_per_page, rows, pages;
	fmt_t fmt;
	wl_afile *af = NULL;
	cairo_surface_t *surf = NULL;
	cairo_t *cr = NULL;
	wl_status st;
	if (!dot)
		return wl_err_set(err, WL_EINVAL, "'%s': name the sheet .svg, .pdf or .png", path);
	if (!strcasecmp(dot, ".svg"))
		fmt = FMT_SVG;
	else if (!strcasecmp(dot, ".pdf"))
		fmt = FMT_PDF;
	else if (!strcasecmp(dot, ".png"))
		fmt = FMT_PNG;
	else
		return wl_err_set(err, WL_EINVAL, "'%s': name the sheet .svg, .pdf or .png", path);
	if (o->n_ids < 1 || !(o->size_mm > 0))
		return wl_err_set(err, WL_EINVAL, "give at least one id and a positive size");
	if ((st = wl_tag_family(o->family, &fam, &fam_destroy, err)))
		return st;
	for (int i = 0; i < o->n_ids; i++)
		if (o->ids[i] < 0 || o->ids[i] >= (long)fam->ncodes) {
			st = wl_err_set(err, WL_EINVAL, "id %ld: family %s has ids 0 to %u", o->ids[i],
			                o->family, fam->ncodes - 1);
			goto out;
		}
	cell = o->size_mm / fam->width_at_border;
	tag_mm = cell * fam->total_width;
	cw = tag_mm + GAP_MM;
	chh = tag_mm + LABEL_MM + GAP_MM;
	cols = (int)floor((pw - 2 * MARGIN_MM + GAP_MM) / cw);
	rows_per_page = (int)floor((ph - 2 * MARGIN_MM - FOOT_MM + GAP_MM) / chh);
	if (cols < 1 || rows_per_page < 1) {
		st = wl_err_set(
		        err, WL_EINVAL,
		        "a %.0f mm tag (%.0f mm with its white border) does not fit on a %.0fx%.0f mm page "
		        "with margins: choose a smaller --size-mm",
		        o->size_mm, tag_mm, pw, ph);
		goto out;
	}
	rows = (o->n_ids + cols - 1) / cols;
	pages = fmt == FMT_PDF ? (rows + rows_per_page - 1) / rows_per_page : 1;
	if (fmt != FMT_PDF)
		rows_per_page = rows;
	sheet_h = fmt == FMT_PDF ? ph : fmax(ph, 2 * MARGIN_MM + FOOT_MM + rows * chh);
	if (fmt == FMT_PNG && (pw / 25.4 * dpi > 20000 || sheet_h / 25.4 * dpi > 60000)) {
		st = wl_err_set(err, WL_ELIMIT, "the PNG would be too large at %.0f dpi: lower --dpi", dpi);
		goto out;
	}
	if ((st = wl_afile_open(path, &af, err)))
		goto out;
	if (fmt == FMT_SVG) {
		surf = cairo_svg_surface_create_for_stream(write_fp, wl_afile_fp(af), pw, sheet_h);
		cairo_svg_surface_set_document_unit(surf, CAIRO_SVG_UNIT_MM); /* user unit = 1 mm */
	} else if (fmt == FMT_PDF) {
		surf = cairo_pdf_surface_create_for_stream(write_fp, wl_afile_fp(af), pw * 72 / 25.4,
		                                           ph * 72 / 25.4);
	} else {
		surf = cairo_image_surface_create(CAIRO_FORMAT_RGB24, (int)lround(pw / 25.4 * dpi),
		                                  (int)lround(sheet_h / 25.4 * dpi));
	}
	cr = cairo_create(surf);
	if (fmt == FMT_PDF)
		cairo_scale(cr, 72 / 25.4, 72 / 25.4);
	else if (fmt == FMT_PNG)
		cairo_scale(cr, dpi / 25.4, dpi / 25.4);
	for (int page = 0, k = 0; page < pages; page++) {
		cairo_set_source_rgb(cr, 1, 1, 1);
		cairo_paint(cr);
		for (int r = 0; r < rows_per_page && k < o->n_ids; r++)
			for (int c = 0; c < cols && k < o->n_ids; c++, k++) {
				image_u8_t *im = apriltag_to_image(fam, (int)o->ids[k]);
				double x = MARGIN_MM + c * cw, y = MARGIN_MM + r * chh;
				if (!im) {
					st = wl_err_set(err, WL_ENOMEM, "out of memory drawing tag %ld",
					                o->ids[k]);
					goto out;
				}
				draw_tag(cr, im, x, y + LABEL_MM, cell);
				image_u8_destroy(im);
				draw_label(cr, o->family, o->ids[k], o->size_mm, x + cell, y + 4);
			}
		draw_scale_bar(cr, MARGIN_MM, sheet_h - MARGIN_MM - FOOT_MM + 10);
		cairo_show_page(cr);
	}
	cairo_destroy(cr);
	cr = NULL;
	if (fmt == FMT_PNG &&
	    cairo_surface_write_to_png_stream(surf, write_fp, wl_afile_fp(af)) != CAIRO_STATUS_SUCCESS) {
		st = wl_err_set(err, WL_EIO, "cannot write '%s'", path);
		goto out;
	}
	cairo_surface_finish(surf);
	if (cairo_surface_status(surf) != CAIRO_STATUS_SUCCESS) {
		st = wl_err_set(err, WL_EIO, "cannot write '%s': %s", path,
		                cairo_status_to_string(cairo_surface_status(surf)));
		goto out;
	}
	cairo_surface_destroy(surf);
	surf = NULL;
	st = wl_afile_commit(af, err);
	af = NULL;
out:
	if (cr)
		cairo_destroy(cr);
	if (surf)
		cairo_surface_destroy(surf);
	wl_afile_abort(af);
	if (fam)
		fam_destroy(fam);
	return st;
}
