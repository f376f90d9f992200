/* cmd_markers.c: `wakeline markers`: printable sheets of floor or robot markers at exact scale. */
#include <cairo.h>
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "calib/markers.h"
#include "cli/cli.h"

const char cmd_markers_summary[] = "printable sheets of floor or robot markers (SVG, PDF or PNG)";

static const char usage_text[] =
        "usage: wakeline markers --ids LIST --size-mm S -o SHEET.(svg|pdf|png) [options]\n"
        "\n"
        "Draws AprilTag markers at exact scale, each with its id, on pages of the\n"
        "paper's size, each page with a 100 mm scale bar to check the print with a ruler.\n"
        "A PDF holds every page; SVG and PNG write one file a page: FILE itself when\n"
        "one page is enough, else FILE with -1, -2, ... before the extension.\n"
        "\n"
        "  --ids LIST        ids, e.g. 0-3 or 0,2,5-7\n"
        "  --size-mm S       side of each tag's black square in millimetres\n"
        "  -o, --output FILE the sheet; the format follows the extension\n"
        "  --robot           robot tags: a cut line, ticks on the centre lines and an\n"
        "                    arrow for the heading the tracker reports (the tag's top)\n"
        "  --family NAME     tag family (default tag36h11)\n"
        "  --dpi N           PNG resolution (default 300; written into the PNG)\n"
        "  --page NAME       a4 (default), a3 or letter, portrait\n"
        "  -h, --help        this text\n"
        "\n"
        "Print at 100 % (no 'fit to page'), then measure the scale bar and a tag; give\n"
        "the measured size as size_m in the layout.  Mount a robot tag with its arrow\n"
        "toward the robot's front, its centre ticks over the point to track.\n"
        "Exit status: 0 ok, 1 failure, 2 usage.\n";

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

int cmd_markers(int argc, char **argv)
{
	static const struct option opts[] = {
	        {"ids", required_argument, NULL, 'i'},
	        {"size-mm", required_argument, NULL, 's'},
	        {"output", required_argument, NULL, 'o'},
	        {"family", required_argument, NULL, 'f'},
	        {"dpi", required_argument, NULL, 'd'},
	        {"page", required_argument, NULL, 'p'},
	        {"robot", no_argument, NULL, 'r'},
	        {"help", no_argument, NULL, 'h'},
	        {NULL, 0, NULL, 0},
	};
	static long ids[MAX_IDS];
	wl_markers_opts mo = {"tag36h11", ids, 0, 0, 300, 210, 297, 0};
	int pages = 0;
	const char *out = NULL;
	wl_err err = {0};
	int c;
	optind = 1;
	while ((c = getopt_long(argc, argv, "o:h", opts, NULL)) != -1) {
		switch (c) {
		case 'i':
			if (!parse_ids(optarg, ids, &mo.n_ids))
				return cli_usage_error(
				        "markers", "--ids '%s': give ids like 0-3 or 0,2,5-7 (at most %d)",
				        optarg, MAX_IDS);
			break;
		case 's':
			if (!cli_parse_double(optarg, &mo.size_mm) || !(mo.size_mm > 0))
				return cli_usage_error("markers", "--size-mm '%s' is not a positive number",
				                       optarg);
			break;
		case 'o':
			out = optarg;
			break;
		case 'f':
			mo.family = optarg;
			break;
		case 'r':
			mo.robot = 1;
			break;
		case 'd':
			if (!cli_parse_double(optarg, &mo.dpi) || mo.dpi < 30 || mo.dpi > 2400)
				return cli_usage_error("markers", "--dpi '%s': give 30 to 2400", optarg);
			break;
		case 'p':
			if (!strcmp(optarg, "a4")) {
				mo.page_w_mm = 210;
				mo.page_h_mm = 297;
			} else if (!strcmp(optarg, "a3")) {
				mo.page_w_mm = 297;
				mo.page_h_mm = 420;
			} else if (!strcmp(optarg, "letter")) {
				mo.page_w_mm = 215.9;
				mo.page_h_mm = 279.4;
			} else {
				return cli_usage_error("markers", "--page '%s': use a4, a3 or letter",
				                       optarg);
			}
			break;
		case 'h':
			fputs(usage_text, stdout);
			return cli_finish("markers", WL_EXIT_OK);
		default:
			return cli_usage_error("markers", "unknown option");
		}
	}
	if (optind != argc)
		return cli_usage_error("markers", "unexpected argument '%s'", argv[optind]);
	if (!mo.n_ids || !(mo.size_mm > 0) || !out)
		return cli_usage_error("markers", "--ids, --size-mm and -o are required");
	c = wl_markers_render(out, &mo, &pages, &err) ? cli_fail("markers", &err) : WL_EXIT_OK;
	/* drop cairo's font caches (fontconfig patterns) so that leak checkers
	 * see a clean exit; safe here, no cairo object is left */
	cairo_debug_reset_static_data();
	if (FcFini)
		FcFini();
	if (c != WL_EXIT_OK)
		return cli_finish("markers", c);
	printf("markers: %d %s %stag%s of %.1f mm on %d page%s -> ", mo.n_ids, mo.family,
	       mo.robot ? "robot " : "", mo.n_ids == 1 ? "" : "s", mo.size_mm, pages, pages == 1 ? "" : "s");
	{
		/* the files: the PDF, or one SVG or PNG a page */
		const char *dot = strrchr(out, '.');
		int each = dot && strcasecmp(dot, ".pdf") != 0 ? pages : 1;
		char file[4200];
		for (int p = 1; p <= each; p++)
			printf("%s%s", p > 1 ? " " : "",
			       wl_markers_page_path(out, p, each, file, sizeof file));
		putchar('\n');
	}
	return cli_finish("markers", WL_EXIT_OK);
}
