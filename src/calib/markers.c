/*
 * markers.c: marker sheets at exact scale (see markers.h).  The bit
 * patterns come from the AprilTag library (apriltag_to_image), drawn as
 * merged runs of black cells so that no seam shows between cells.  Every
 * page has the paper's size: PDF pages in one file, SVG and PNG one file a
 * page.  Robot tags get a cut line, centre ticks and the heading arrow.
 */
#include "calib/markers.h"

#include <stdint.h>
#include <stdlib.h>

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
#define CUT_MM 7.0   /* robot tags: from the tag's white border to the cut line */

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

static void draw_label(cairo_t *cr, const char *family, long id, double size_mm, int robot, double x,
                       double y)
{
	char txt[160];
	cairo_set_source_rgb(cr, 0, 0, 0);
	cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_BOLD);
	cairo_set_font_size(cr, 4.5);
	snprintf(txt, sizeof txt, "%s id %ld%s", family, id, robot ? " (robot)" : "");
	cairo_move_to(cr, x, y);
	cairo_show_text(cr, txt);
	cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
	cairo_set_font_size(cr, 3.2);
	if (robot)
		snprintf(txt, sizeof txt, "black square %.1f mm; arrow: the robot's front", size_mm);
	else
		snprintf(txt, sizeof txt, "black square %.1f mm; this edge is the tag's top", size_mm);
	cairo_move_to(cr, x, y + 4.2);
	cairo_show_text(cr, txt);
}

/* A robot tag's frame around the tag of side t at (x, y) (white border
 * included): a dashed cut line CUT_MM outside it; ticks on the tag's centre
 * lines in that margin, which meet at the centre (a cross drawn over the
 * code would spoil its decoding); and at the top an arrow pointing the way
 * the tracker's heading points: from the tag's bottom edge to its top edge
 * as printed (src/track/tracker.c, tag_pose). */
static void draw_robot_frame(cairo_t *cr, double x, double y, double t)
{
	double cx = x + 0.5 * t, cy = y + 0.5 * t, c = CUT_MM, tick = 0.55 * c;
	const double dash[2] = {2.0, 1.5};
	cairo_set_source_rgb(cr, 0.35, 0.35, 0.35);
	cairo_set_line_width(cr, 0.25);
	cairo_set_dash(cr, dash, 2, 0);
	cairo_rectangle(cr, x - c, y - c, t + 2 * c, t + 2 * c);
	cairo_stroke(cr);
	cairo_set_dash(cr, NULL, 0, 0);
	cairo_set_source_rgb(cr, 0, 0, 0);
	cairo_set_line_width(cr, 0.35);
	cairo_move_to(cr, cx, y + t + c);
	cairo_line_to(cr, cx, y + t + c - tick);
	cairo_move_to(cr, x - c, cy);
	cairo_line_to(cr, x - c + tick, cy);
	cairo_move_to(cr, x + t + c, cy);
	cairo_line_to(cr, x + t + c - tick, cy);
	cairo_stroke(cr);
	/* the arrow: shaft on the centre line, head toward the top */
	cairo_set_line_width(cr, 0.6);
	cairo_move_to(cr, cx, y - 0.8);
	cairo_line_to(cr, cx, y - c + 2.2);
	cairo_stroke(cr);
	cairo_move_to(cr, cx, y - c + 0.6);
	cairo_line_to(cr, cx - 1.6, y - c + 3.2);
	cairo_line_to(cr, cx + 1.6, y - c + 3.2);
	cairo_close_path(cr);
	cairo_fill(cr);
	cairo_set_font_size(cr, 2.6);
	cairo_move_to(cr, cx + 2.2, y - c + 3.4);
	cairo_show_text(cr, "heading");
}

/* ---- PNG resolution ------------------------------------------------------ */

typedef struct {
	unsigned char *p;
	size_t n, cap;
} membuf;

static cairo_status_t write_mem(void *closure, const unsigned char *data, unsigned int len)
{
	membuf *m = closure;
	if (m->n + len > m->cap) {
		size_t nc = m->cap ? 2 * m->cap : 1 << 16;
		unsigned char *q;
		while (nc < m->n + len)
			nc *= 2;
		q = realloc(m->p, nc);
		if (!q)
			return CAIRO_STATUS_NO_MEMORY;
		m->p = q;
		m->cap = nc;
	}
	memcpy(m->p + m->n, data, len);
	m->n += len;
	return CAIRO_STATUS_SUCCESS;
}

static uint32_t crc32_png(const unsigned char *p, size_t n)
{
	uint32_t c = 0xffffffffu;
	for (size_t i = 0; i < n; i++) {
		c ^= p[i];
		for (int k = 0; k < 8; k++)
			c = c & 1 ? 0xedb88320u ^ (c >> 1) : c >> 1;
	}
	return c ^ 0xffffffffu;
}

static void put32(unsigned char *p, uint32_t v)
{
	p[0] = (unsigned char)(v >> 24), p[1] = (unsigned char)(v >> 16), p[2] = (unsigned char)(v >> 8),
	p[3] = (unsigned char)v;
}

/* Writes the PNG cairo made with a pHYs chunk after IHDR (PNG spec 11.3.5.3:
 * pixels per metre, unit 1), so that viewers and printers know its size. */
static int write_png_dpi(FILE *fp, const membuf *m, double dpi)
{
	unsigned char ch[21];
	uint32_t ppm = (uint32_t)lround(dpi / 0.0254);
	const size_t ihdr_end = 8 + 25; /* signature, then IHDR: length, type, 13 bytes, CRC */
	if (m->n < ihdr_end || memcmp(m->p + 12, "IHDR", 4) != 0)
		return 0;
	put32(ch, 9);
	memcpy(ch + 4, "pHYs", 4);
	put32(ch + 8, ppm);
	put32(ch + 12, ppm);
	ch[16] = 1;
	put32(ch + 17, crc32_png(ch + 4, 13));
	return fwrite(m->p, 1, ihdr_end, fp) == ihdr_end && fwrite(ch, 1, sizeof ch, fp) == sizeof ch &&
	       fwrite(m->p + ihdr_end, 1, m->n - ihdr_end, fp) == m->n - ihdr_end;
}

char *wl_markers_page_path(const char *path, int page, int npages, char *buf, size_t cap)
{
	const char *dot = strrchr(path, '.'), *slash = strrchr(path, '/');
	if (npages <= 1 || !dot || (slash && dot < slash)) {
		snprintf(buf, cap, "%s", path);
		return buf;
	}
	snprintf(buf, cap, "%.*s-%d%s", (int)(dot - path), path, page, dot);
	return buf;
}

/* One page of the sheet: tags k0 .. k0 + rows * cols - 1 (those that exist). */
typedef struct {
	const wl_markers_opts *o;
	struct apriltag_family *fam;
	double pw, ph, cell, tag_mm, cw, chh, frame;
	int cols, rows_per_page;
} layout;

static wl_status draw_page(cairo_t *cr, const layout *L, int k0, wl_err *err)
{
	const wl_markers_opts *o = L->o;
	int k = k0;
	cairo_set_source_rgb(cr, 1, 1, 1);
	cairo_paint(cr);
	for (int r = 0; r < L->rows_per_page && k < o->n_ids; r++)
		for (int c = 0; c < L->cols && k < o->n_ids; c++, k++) {
			image_u8_t *im = apriltag_to_image(L->fam, (int)o->ids[k]);
			double x = MARGIN_MM + c * L->cw, y = MARGIN_MM + r * L->chh;
			if (!im)
				return wl_err_set(err, WL_ENOMEM, "out of memory drawing tag %ld", o->ids[k]);
			draw_tag(cr, im, x + L->frame, y + LABEL_MM + L->frame, L->cell);
			image_u8_destroy(im);
			if (o->robot)
				draw_robot_frame(cr, x + L->frame, y + LABEL_MM + L->frame, L->tag_mm);
			draw_label(cr, o->family, o->ids[k], o->size_mm, o->robot,
			           x + (o->robot ? 0 : L->cell), y + 4);
		}
	draw_scale_bar(cr, MARGIN_MM, L->ph - MARGIN_MM - FOOT_MM + 10);
	return WL_OK;
}

/* Writes one SVG or PNG page to its own file. */
static wl_status write_single(const char *file, fmt_t fmt, const layout *L, double dpi, int k0, wl_err *err)
{
	wl_afile *af = NULL;
	cairo_surface_t *surf;
	cairo_t *cr;
	membuf png = {NULL, 0, 0};
	wl_status st;
	if ((st = wl_afile_open(file, &af, err)))
		return st;
	if (fmt == FMT_SVG) {
		surf = cairo_svg_surface_create_for_stream(write_fp, wl_afile_fp(af), L->pw, L->ph);
		cairo_svg_surface_set_document_unit(surf, CAIRO_SVG_UNIT_MM); /* user unit = 1 mm */
	} else {
		surf = cairo_image_surface_create(CAIRO_FORMAT_RGB24, (int)lround(L->pw / 25.4 * dpi),
		                                  (int)lround(L->ph / 25.4 * dpi));
	}
	cr = cairo_create(surf);
	if (fmt == FMT_PNG)
		cairo_scale(cr, dpi / 25.4, dpi / 25.4);
	st = draw_page(cr, L, k0, err);
	cairo_show_page(cr);
	cairo_destroy(cr);
	if (!st && fmt == FMT_PNG) {
		if (cairo_surface_write_to_png_stream(surf, write_mem, &png) != CAIRO_STATUS_SUCCESS ||
		    !write_png_dpi(wl_afile_fp(af), &png, dpi))
			st = wl_err_set(err, WL_EIO, "cannot write '%s'", file);
	}
	cairo_surface_finish(surf);
	if (!st && cairo_surface_status(surf) != CAIRO_STATUS_SUCCESS)
		st = wl_err_set(err, WL_EIO, "cannot write '%s': %s", file,
		                cairo_status_to_string(cairo_surface_status(surf)));
	cairo_surface_destroy(surf);
	free(png.p);
	if (st) {
		wl_afile_abort(af);
		return st;
	}
	return wl_afile_commit(af, err);
}

/* Writes every page into one PDF. */
static wl_status write_pdf(const char *file, const layout *L, int pages, wl_err *err)
{
	wl_afile *af = NULL;
	cairo_surface_t *surf;
	cairo_t *cr;
	wl_status st;
	if ((st = wl_afile_open(file, &af, err)))
		return st;
	surf = cairo_pdf_surface_create_for_stream(write_fp, wl_afile_fp(af), L->pw * 72 / 25.4,
	                                           L->ph * 72 / 25.4);
	cr = cairo_create(surf);
	cairo_scale(cr, 72 / 25.4, 72 / 25.4);
	for (int page = 0; page < pages && !st; page++) {
		st = draw_page(cr, L, page * L->rows_per_page * L->cols, err);
		cairo_show_page(cr);
	}
	cairo_destroy(cr);
	cairo_surface_finish(surf);
	if (!st && cairo_surface_status(surf) != CAIRO_STATUS_SUCCESS)
		st = wl_err_set(err, WL_EIO, "cannot write '%s': %s", file,
		                cairo_status_to_string(cairo_surface_status(surf)));
	cairo_surface_destroy(surf);
	if (st) {
		wl_afile_abort(af);
		return st;
	}
	return wl_afile_commit(af, err);
}

wl_status wl_markers_render(const char *path, const wl_markers_opts *o, int *npages, wl_err *err)
{
	struct apriltag_family *fam = NULL;
	void (*fam_destroy)(struct apriltag_family *) = NULL;
	const char *dot = strrchr(path, '.');
	double dpi = o->dpi > 0 ? o->dpi : 300;
	int rows, pages;
	fmt_t fmt;
	layout L;
	wl_status st;
	if (npages)
		*npages = 0;
	memset(&L, 0, sizeof L);
	L.o = o;
	L.pw = o->page_w_mm > 0 ? o->page_w_mm : 210;
	L.ph = o->page_h_mm > 0 ? o->page_h_mm : 297;
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
	L.fam = fam;
	for (int i = 0; i < o->n_ids; i++)
		if (o->ids[i] < 0 || o->ids[i] >= (long)fam->ncodes) {
			st = wl_err_set(err, WL_EINVAL, "id %ld: family %s has ids 0 to %u", o->ids[i],
			                o->family, fam->ncodes - 1);
			goto out;
		}
	L.cell = o->size_mm / fam->width_at_border;
	L.tag_mm = L.cell * fam->total_width;
	L.frame = o->robot ? CUT_MM : 0;
	L.cw = L.tag_mm + 2 * L.frame + GAP_MM;
	L.chh = L.tag_mm + 2 * L.frame + LABEL_MM + GAP_MM;
	L.cols = (int)floor((L.pw - 2 * MARGIN_MM + GAP_MM) / L.cw);
	L.rows_per_page = (int)floor((L.ph - 2 * MARGIN_MM - FOOT_MM + GAP_MM) / L.chh);
	if (L.cols < 1 || L.rows_per_page < 1) {
		st = wl_err_set(
		        err, WL_EINVAL,
		        "a %.0f mm tag (%.0f mm with its white border%s) does not fit on a %.0fx%.0f mm "
		        "page with margins: choose a smaller --size-mm or a larger --page",
		        o->size_mm, L.tag_mm + 2 * L.frame, o->robot ? " and cut margin" : "", L.pw, L.ph);
		goto out;
	}
	if (fmt == FMT_PNG && (L.pw / 25.4 * dpi > 20000 || L.ph / 25.4 * dpi > 30000)) {
		st = wl_err_set(err, WL_ELIMIT, "the PNG would be too large at %.0f dpi: lower --dpi", dpi);
		goto out;
	}
	rows = (o->n_ids + L.cols - 1) / L.cols;
	pages = (rows + L.rows_per_page - 1) / L.rows_per_page;
	if (fmt == FMT_PDF) {
		st = write_pdf(path, &L, pages, err);
	} else {
		char file[4200];
		for (int page = 0; page < pages && !st; page++)
			st = write_single(wl_markers_page_path(path, page + 1, pages, file, sizeof file), fmt,
			                  &L, dpi, page * L.rows_per_page * L.cols, err);
	}
	if (!st && npages)
		*npages = pages;
out:
	if (fam)
		fam_destroy(fam);
	return st;
}
