/* cmd_markers.c: `wakeline markers`: a printable sheet of floor markers at exact scale. */
#include <cairo.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "calib/markers.h"
#include "cli/cli.h"

const char cmd_markers_summary[] = "printable sheet of floor markers (SVG, PDF or PNG)";

static const char HEAD[] = "usage: wakeline markers --ids LIST --size-mm S -o SHEET.(svg|pdf|png) [options]\n"
                           "\n"
                           "Draws AprilTag markers at exact scale for the tank floor, each with its id,\n"
                           "and a 100 mm scale bar to check the print with a ruler.\n"
                           "\n";
static const char TAIL[] =
        "\n"
        "Print at 100 % (no 'fit to page'), then measure the scale bar and a tag; give\n"
        "the measured size as size_m in the layout.  Exit status: 0 ok, 1 failure, 2 usage.\n";

#define MAX_IDS 1000

/* fontconfig comes in with cairo's text; its FcFini is looked up weakly so
 * that wakeline need not link fontconfig itself (NULL when absent) */
extern void FcFini(void) __attribute__((weak));

static int parse_ids(const char *s, long *ids, int *n)
{
	const char *p = s;
	*n = 0;
	while (*p) {
		char *end;
		long a = strtol(p, &end, 10), b;
		if (end == p || a < 0)
			return 0;
		b = a;
		p = end;
		if (*p == '-') {
			b = strtol(p + 1, &end, 10);
			if (end == p + 1 || b < a)
				return 0;
			p = end;
		}
		for (long i = a; i <= b; i++) {
			if (*n >= MAX_IDS)
				return 0;
			ids[(*n)++] = i;
		}
		if (*p == ',')
			p++;
		else if (*p)
			return 0;
	}
	return *n > 0;
}

typedef struct {
	long *ids;
	int *n;
} idlist;

static int opt_ids(const char *arg, void *dest, char *msg, size_t cap)
{
	idlist *l = dest;
	if (parse_ids(arg, l->ids, l->n))
		return 0;
	snprintf(msg, cap, "give ids like 0-3 or 0,2,5-7 (at most %d)", MAX_IDS);
	return 1;
}

static int opt_page(const char *arg, void *dest, char *msg, size_t cap)
{
	wl_markers_opts *mo = dest;
	static const struct {
		const char *name;
		double w, h;
	} pages[] = {{"a4", 210, 297}, {"a3", 297, 420}, {"letter", 215.9, 279.4}};
	for (size_t i = 0; i < sizeof pages / sizeof pages[0]; i++)
		if (strcmp(arg, pages[i].name) == 0) {
			mo->page_w_mm = pages[i].w;
			mo->page_h_mm = pages[i].h;
			return 0;
		}
	snprintf(msg, cap, "use a4, a3 or letter");
	return 1;
}

int cmd_markers(int argc, char **argv)
{
	static long ids[MAX_IDS];
	wl_markers_opts mo = {"tag36h11", ids, 0, 0, 300, 210, 297};
	idlist il = {ids, &mo.n_ids};
	const char *out = NULL;
	wl_err err = {0};
	int c, first;
	const cli_opt tab[] = {
	        CLI_OPT_FN("ids", "LIST", "ids, e.g. 0-3 or 0,2,5-7", &il, opt_ids),
	        CLI_OPT_POS("size-mm", "S", "side of each tag's black square in millimetres", &mo.size_mm),
	        CLI_OPT_STR("output", 'o', "FILE", "the sheet; the format follows the extension", &out),
	        CLI_OPT_STR("family", 0, "NAME", "tag family (default tag36h11)", &mo.family),
	        CLI_OPT_NUM("dpi", "N", "PNG resolution (default 300)", &mo.dpi, 30, 2400),
	        CLI_OPT_FN("page", "NAME", "a4 (default), a3 or letter, portrait", &mo, opt_page),
	        CLI_OPT_END};
	const cli_opt *tables[] = {tab, NULL};
	if ((c = cli_parse("markers", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return c;
	if (first != argc)
		return cli_usage_error("markers", "unexpected argument '%s'", argv[first]);
	if (!mo.n_ids || !(mo.size_mm > 0) || !out)
		return cli_usage_error("markers", "--ids, --size-mm and -o are required");
	c = wl_markers_render(out, &mo, &err) ? cli_fail("markers", &err) : WL_EXIT_OK;
	/* drop cairo's font caches (fontconfig patterns) so that leak checkers
	 * see a clean exit; safe here, no cairo object is left */
	cairo_debug_reset_static_data();
	if (FcFini)
		FcFini();
	if (c != WL_EXIT_OK)
		return cli_finish("markers", c);
	printf("markers: %d %s tag%s of %.1f mm -> %s\n", mo.n_ids, mo.family, mo.n_ids == 1 ? "" : "s",
	       mo.size_mm, out);
	return cli_finish("markers", WL_EXIT_OK);
}
