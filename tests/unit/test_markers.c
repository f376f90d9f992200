/*
 * test_markers.c: marker sheets (calib/markers.h) read back by the tag
 * detector the tracker uses (track/track.h, AprilTag): a robot tag's
 * printed arrow points the way the tracker's heading points (from the
 * midpoint of the tag's bottom edge to that of its top edge, as tag_pose in
 * src/track/tracker.c computes it), its centre ticks meet at the detected
 * centre; pages have the paper's size and a PNG says its resolution;
 * sheets of several pages go to numbered files.
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cmocka.h>
#include <cairo.h>

#include "calib/markers.h"
#include "report/report.h"
#include "track/track.h"

static char tmpdir[256];

static int setup_dir(void **state)
{
	(void)state;
	snprintf(tmpdir, sizeof tmpdir, "/tmp/wl_test_markers_XXXXXX");
	return mkdtemp(tmpdir) ? 0 : -1;
}

static int teardown_dir(void **state)
{
	char cmd[300];
	(void)state;
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmpdir);
	wl_report_release_caches(); /* cairo's and fontconfig's caches, for the leak checker */
	return system(cmd);
}

/* A PNG as 8-bit luma (the caller frees it). */
static uint8_t *load_luma(const char *path, int *w, int *h)
{
	cairo_surface_t *s = cairo_image_surface_create_from_png(path);
	uint8_t *g;
	assert_int_equal(cairo_surface_status(s), CAIRO_STATUS_SUCCESS);
	*w = cairo_image_surface_get_width(s);
	*h = cairo_image_surface_get_height(s);
	g = malloc((size_t)*w * (size_t)*h);
	assert_non_null(g);
	cairo_surface_flush(s);
	for (int y = 0; y < *h; y++) {
		const uint32_t *row = (const uint32_t *)(cairo_image_surface_get_data(s) +
		                                         y * cairo_image_surface_get_stride(s));
		for (int x = 0; x < *w; x++)
			g[(size_t)y * (size_t)*w + (size_t)x] =
			        (uint8_t)(((row[x] >> 16 & 255) + (row[x] >> 8 & 255) + (row[x] & 255)) / 3);
	}
	cairo_surface_destroy(s);
	return g;
}

/* The pHYs chunk's pixels per metre (x), or 0 when there is none. */
static long png_ppm(const char *path)
{
	unsigned char b[64];
	FILE *fp = fopen(path, "rb");
	size_t n;
	assert_non_null(fp);
	n = fread(b, 1, sizeof b, fp);
	fclose(fp);
	/* signature (8), IHDR (25), then our pHYs: length 9, "pHYs", x, y, unit */
	if (n < 33 + 21 || memcmp(b + 37, "pHYs", 4) != 0 || b[49] != 1)
		return 0;
	return (long)b[41] << 24 | (long)b[42] << 16 | (long)b[43] << 8 | (long)b[44];
}

static void test_page_paths(void **state)
{
	char buf[256];
	(void)state;
	assert_string_equal(wl_markers_page_path("a/sheet.svg", 1, 1, buf, sizeof buf), "a/sheet.svg");
	assert_string_equal(wl_markers_page_path("a/sheet.svg", 3, 4, buf, sizeof buf), "a/sheet-3.svg");
	assert_string_equal(wl_markers_page_path("a.b/sheet", 2, 2, buf, sizeof buf), "a.b/sheet");
}

/* Robot tag 10, 40 mm, at 200 dpi on A4.  The detector's corners give the
 * tracker's heading; the arrow printed above the tag, found from the dark
 * pixels between the tag's white border and the cut line on its centre
 * line, must lie in that direction from the centre. */
static void test_robot_tag_heading(void **state)
{
	const long ids[1] = {10};
	wl_markers_opts o = {"tag36h11", ids, 1, 40, 200, 210, 297, 1};
	char path[400];
	wl_err err;
	wl_tagdet *det = NULL;
	wl_tagdet_hit hits[4];
	uint8_t *g;
	int w, h, n, pages = 0;
	double hx, hy, len, ax = 0, ay = 0, an = 0, px_mm = 200 / 25.4, side;
	(void)state;
	snprintf(path, sizeof path, "%s/robot.png", tmpdir);
	assert_int_equal(wl_markers_render(path, &o, &pages, &err), WL_OK);
	assert_int_equal(pages, 1);
	g = load_luma(path, &w, &h);
	/* A4 at 200 dpi, and the file says so (pHYs, pixels per metre) */
	assert_int_equal(w, (int)lround(210 * px_mm));
	assert_int_equal(h, (int)lround(297 * px_mm));
	assert_int_equal(png_ppm(path), lround(200 / 0.0254));
	assert_int_equal(wl_tagdet_create("tag36h11", 0, &det, &err), WL_OK);
	n = wl_tagdet_detect(det, g, w, 0, 0, w, h, hits, 4);
	assert_int_equal(n, 1);
	assert_int_equal(hits[0].id, 10);
	/* the tracker's heading in pixels: p0, p1 bottom corners, p2, p3 top */
	hx = 0.5 * (hits[0].p[2][0] + hits[0].p[3][0] - hits[0].p[0][0] - hits[0].p[1][0]);
	hy = 0.5 * (hits[0].p[2][1] + hits[0].p[3][1] - hits[0].p[0][1] - hits[0].p[1][1]);
	len = hypot(hx, hy);
	side = len;
	hx /= len, hy /= len;
	assert_true(hy < -0.9999);                  /* up the page */
	assert_true(fabs(side / px_mm - 40) < 0.3); /* the black square, detected */
	/* the arrow: dark pixels in a 6 mm wide strip on the centre line, from
	 * the white border (one cell, 5 mm) to the cut line 7 mm beyond it */
	{
		double cu = hits[0].c[0], cv = hits[0].c[1], top = cv - 0.5 * side;
		for (int v = (int)(top - (5 + 7) * px_mm); v < (int)(top - 5 * px_mm); v++)
			for (int u = (int)(cu - 3 * px_mm); u <= (int)(cu + 3 * px_mm); u++)
				if (g[(size_t)v * (size_t)w + (size_t)u] < 100)
					ax += u, ay += v, an++;
		assert_true(an > 100);
		ax = ax / an - cu, ay = ay / an - cv;
		len = hypot(ax, ay);
		assert_true((ax * hx + ay * hy) / len > 0.9999);
		/* the centre ticks: the left one on the centre's row, the bottom
		 * one on its column (within a pixel) */
		{
			double left = cu - 0.5 * side - (5 + 7) * px_mm,
			       bottom = cv + 0.5 * side + (5 + 7) * px_mm;
			double sv = 0, sn = 0, su = 0, sm = 0;
			for (int v = (int)(cv - 3 * px_mm); v <= (int)(cv + 3 * px_mm); v++)
				for (int u = (int)left + 2; u < (int)(left + 3 * px_mm); u++)
					if (g[(size_t)v * (size_t)w + (size_t)u] < 100)
						sv += v, sn++;
			for (int v = (int)(bottom - 3 * px_mm); v < (int)bottom - 2; v++)
				for (int u = (int)(cu - 3 * px_mm); u <= (int)(cu + 3 * px_mm); u++)
					if (g[(size_t)v * (size_t)w + (size_t)u] < 100)
						su += u, sm++;
			assert_true(sn > 10 && sm > 10);
			assert_true(fabs(sv / sn - cv) < 1.0);
			assert_true(fabs(su / sm - cu) < 1.0);
		}
	}
	wl_tagdet_destroy(det);
	free(g);
}

/* Six robot tags of 60 mm take two A4 pages: two files, each a page. */
static void test_pages(void **state)
{
	const long ids[6] = {10, 11, 12, 13, 14, 15};
	wl_markers_opts o = {"tag36h11", ids, 6, 60, 72, 210, 297, 1};
	char path[400], file[400];
	struct stat st;
	wl_err err;
	int pages = 0;
	(void)state;
	snprintf(path, sizeof path, "%s/robots.svg", tmpdir);
	assert_int_equal(wl_markers_render(path, &o, &pages, &err), WL_OK);
	assert_int_equal(pages, 2);
	assert_int_equal(stat(wl_markers_page_path(path, 1, 2, file, sizeof file), &st), 0);
	assert_int_equal(stat(wl_markers_page_path(path, 2, 2, file, sizeof file), &st), 0);
	assert_int_not_equal(stat(path, &st), 0);
	/* a tag that cannot fit is an error saying what to do */
	o.size_mm = 170;
	assert_int_equal(wl_markers_render(path, &o, &pages, &err), WL_EINVAL);
	assert_non_null(strstr(err.msg, "--size-mm"));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_page_paths),
	        cmocka_unit_test(test_robot_tag_heading),
	        cmocka_unit_test(test_pages),
	};
	return cmocka_run_group_tests(tests, setup_dir, teardown_dir);
}
