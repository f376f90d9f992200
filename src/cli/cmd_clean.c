/* cmd_clean.c: `wakeline clean RAW.csv -o CLEAN.csv`: smoothing, outliers,
 * gaps, segments and trimming (src/clean/clean.h; docs/clean.md). */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "clean/clean.h"
#include "cli/cli.h"
#include "cli/print.h"
#include "cli/stageopts.h"
#include "formats/cal.h"
#include "formats/format.h"

const char cmd_clean_summary[] =
        "smooth tracks, reject outliers, bridge gaps, trim and segment (RAW.csv -> CLEAN.csv)";

static const char HEAD[] = "usage: wakeline clean RAW.csv -o CLEAN.csv [options]\n"
                           "\n"
                           "Smooths each robot's track (Rauch-Tung-Striebel by default), rejects\n"
                           "outlying detections, bridges short gaps, splits at long ones, trims the\n"
                           "start to steady motion and cuts the end at the tank wall.  Writes CLEAN.csv\n"
                           "and a JSON sidecar with every parameter and what was cut.  See docs/clean.md.\n"
                           "\n";
static const char TAIL[] = "\nExit status: 0 ok, 1 failure (nothing written), 2 usage error.\n";

/* The outline from CAL.json into the parameters; doc keeps its hash. */
static wl_status load_outline(const char *cal, wl_clean_params *p, wl_cal_doc *doc, wl_err *err)
{
	wl_cal_outline o;
	wl_status st;
	if ((st = wl_cal_doc_read(cal, doc, err)) || (st = wl_cal_get_outline(doc, &o, err)))
		return st;
	p->n_outline = o.n;
	memcpy(p->outline_m, o.xy, sizeof p->outline_m);
	return WL_OK;
}

static int run(const char *in, const char *out, const char *side, const char *cal, const cli_stages *s,
               int quiet)
{
	wl_clean_params p = s->p.clean;
	wl_clean_source src;
	wl_clean_result res = {0};
	wl_clean_raw *raw = NULL;
	wl_cal_doc doc = {0};
	wl_err err;
	cli_diag cd;
	int rc = WL_EXIT_OK;
	wl_err_clear(&err);
	if ((cal && load_outline(cal, &p, &doc, &err)) || wl_clean_raw_read(in, &raw, &err) ||
	    wl_clean_run(raw, &p, cli_diag_init(&cd, "clean", quiet), &res, &err)) {
		rc = cli_fail("clean", &err);
		goto done;
	}
	wl_clean_source_init(&src, raw);
	src.cal_path = cal;
	src.cal_sha256 = cal ? doc.sha256_hex : NULL;
	src.tank_rect = s->have_tank;
	if (wl_clean_write(out, side, &p, &src, &res, &err)) {
		rc = cli_fail("clean", &err);
		goto done;
	}
	if (!quiet)
		for (size_t k = 0; k < res.nrobots; k++)
			cli_print_clean_robot(&res.robots[k]);
done:
	wl_cal_doc_release(&doc);
	wl_clean_result_release(&res);
	wl_clean_raw_destroy(raw);
	return rc;
}

int cmd_clean(int argc, char **argv)
{
	cli_stages s;
	const char *out = NULL, *side = NULL, *cal = NULL;
	char side_buf[4096];
	int quiet = 0, rc, first;
	const cli_opt own[] = {
	        CLI_OPT_SECTION("Output:"),
	        CLI_OPT_STR("output", 'o', "FILE", "CLEAN.csv to write (required)", &out),
	        CLI_OPT_STR("sidecar", 'j', "FILE", "sidecar (default: the output with .json)", &side),
	        CLI_OPT_FLAG("quiet", 'q', "no summary lines", &quiet), CLI_OPT_END};
	const cli_opt wall[] = {
	        CLI_OPT_STR("cal", 0, "CAL.json", "tank outline from key tank_outline_m", &cal), CLI_OPT_END};
	const cli_opt *tables[] = {own, s.clean, wall, s.body, NULL};
	cli_stages_init(&s);
	if ((rc = cli_parse("clean", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (first != argc - 1)
		return cli_usage_error("clean", "give exactly one RAW.csv");
	if (!out)
		return cli_usage_error("clean", "give the output file with -o CLEAN.csv");
	if (cal && s.have_tank)
		return cli_usage_error("clean", "give either --cal or --tank, not both");
	if ((rc = cli_stages_finish("clean", &s)) != CLI_CONTINUE)
		return rc;
	if (!side) {
		if (!wl_format_sidecar_path(out, side_buf, sizeof side_buf))
			return cli_usage_error("clean", "the output name '%s' is too long", out);
		side = side_buf;
	}
	if (strcmp(side, out) == 0)
		rc = cli_usage_error("clean", "the sidecar '%s' would overwrite the output", side);
	else
		rc = run(argv[first], out, side, cal, &s, quiet);
	return cli_finish("clean", rc);
}
