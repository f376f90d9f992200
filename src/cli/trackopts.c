/* trackopts.c: the tracker's options shared by `track` and `live` (trackopts.h). */
#define _POSIX_C_SOURCE 200809L
#include "cli/trackopts.h"

#include <stdio.h>
#include <string.h>

#include "cli/cli.h"

enum {
	O_MODE = CLI_TRACK_OPT_BASE,
	O_FAMILY,
	O_IDS,
	O_ROBOTS,
	O_PLANE,
	O_RESCAN,
	O_DEC,
	O_WDEC,
	O_SIGMA,
	O_SHARP,
	O_HAM,
	O_MARGIN
};

const struct option cli_track_longopts[] = {{"mode", required_argument, NULL, O_MODE},
                                            {"family", required_argument, NULL, O_FAMILY},
                                            {"ids", required_argument, NULL, O_IDS},
                                            {"robots", required_argument, NULL, O_ROBOTS},
                                            {"plane-height-m", required_argument, NULL, O_PLANE},
                                            {"rescan-s", required_argument, NULL, O_RESCAN},
                                            {"decimate", required_argument, NULL, O_DEC},
                                            {"window-decimate", required_argument, NULL, O_WDEC},
                                            {"quad-sigma", required_argument, NULL, O_SIGMA},
                                            {"sharpening", required_argument, NULL, O_SHARP},
                                            {"max-hamming", required_argument, NULL, O_HAM},
                                            {"min-margin", required_argument, NULL, O_MARGIN}};
const int cli_track_nlongopts = (int)(sizeof cli_track_longopts / sizeof cli_track_longopts[0]);

const char cli_track_usage[] =
        "  --mode tag|colour       AprilTags (default) or coloured caps\n"
        "  --family NAME           tag family: tag36h11 (default), tag25h9, tag16h5,\n"
        "                          tagStandard41h12, tagCircle21h7\n"
        "  --ids 3,7               track only these tag ids (listed from the first frame)\n"
        "  --robots ROBOTS.csv     per robot: id,plane_height_m,heading_offset_rad,\n"
        "                          body_diameter_m,front_hsv_lo,front_hsv_hi,back_hsv_lo,\n"
        "                          back_hsv_hi (hsv as \"h,s,v\", hue 0-179)\n"
        "  --plane-height-m Z      marker plane height above the floor (default: CAL.json's)\n"
        "  --rescan-s S            full-frame search for new robots every S s (default 2)\n"
        "  --decimate F            AprilTag quad_decimate for full-frame searches (default 2)\n"
        "  --window-decimate F     quad_decimate inside windows (default: 2 for tags >= 32 px, else 1)\n"
        "  --quad-sigma S          blur before segmentation, px (default 0; 0.8 for noisy clips)\n"
        "  --sharpening F          AprilTag decode_sharpening (default 0.25)\n"
        "  --max-hamming N         corrected bits accepted: 0 (default) or 1\n"
        "  --min-margin M          minimum decision margin (default 20; 60 with 1 bit corrected)\n";

void cli_track_merge(const struct option *own, struct option *out)
{
	int n = 0;
	for (; own[n].name; n++)
		out[n] = own[n];
	for (int i = 0; i < cli_track_nlongopts; i++)
		out[n++] = cli_track_longopts[i];
	memset(&out[n], 0, sizeof out[n]);
}

static int number(const char *cmd, const char *name, const char *arg, double lo, double hi, double *out)
{
	if (!cli_parse_double(arg, out) || *out < lo || *out > hi)
		return cli_usage_error(cmd, "%s '%s': give a number from %g to %g", name, arg, lo, hi);
	return 0;
}

int cli_track_option(const char *cmd, int c, const char *arg, wl_track_opts *o, cli_track_extra *x)
{
	double d;
	int rc = 0;
	switch (c) {
	case O_MODE:
		if (strcmp(arg, "tag") == 0)
			o->mode = WL_TRACK_TAG;
		else if (strcmp(arg, "colour") == 0 || strcmp(arg, "color") == 0)
			o->mode = WL_TRACK_COLOUR;
		else
			return cli_usage_error(cmd, "--mode '%s': give tag or colour", arg);
		return 0;
	case O_FAMILY:
		if (strlen(arg) >= sizeof o->family)
			return cli_usage_error(cmd, "--family '%s': unknown family", arg);
		snprintf(o->family, sizeof o->family, "%s", arg);
		return 0;
	case O_IDS:
		x->ids = arg;
		return 0;
	case O_ROBOTS:
		x->robots = arg;
		return 0;
	case O_PLANE:
		return number(cmd, "--plane-height-m", arg, -10, 10, &o->plane_height_m);
	case O_RESCAN:
		return number(cmd, "--rescan-s", arg, 0, 1e6, &o->rescan_s);
	case O_DEC:
		rc = number(cmd, "--decimate", arg, 1, 8, &d);
		o->quad_decimate = (float)d;
		return rc;
	case O_WDEC:
		rc = number(cmd, "--window-decimate", arg, 1, 8, &d);
		o->window_decimate = (float)d;
		return rc;
	case O_SIGMA:
		rc = number(cmd, "--quad-sigma", arg, 0, 10, &d);
		o->quad_sigma = (float)d;
		return rc;
	case O_SHARP:
		return number(cmd, "--sharpening", arg, 0, 10, &o->decode_sharpening);
	case O_HAM:
		if (!cli_parse_int(arg, &o->max_hamming) || o->max_hamming < 0 || o->max_hamming > 1)
			return cli_usage_error(cmd, "--max-hamming '%s': give 0 or 1", arg);
		return 0;
	case O_MARGIN:
		x->margin_set = 1;
		return number(cmd, "--min-margin", arg, 0, 1000, &o->min_margin);
	default:
		return cli_usage_error(cmd, "unknown option");
	}
}

int cli_track_finish(const char *cmd, wl_track_opts *o, cli_track_extra *x)
{
	wl_err err;
	if (x->ids && x->robots)
		return cli_usage_error(cmd, "give --ids or --robots, not both (ROBOTS.csv lists the ids)");
	if (x->margin_set)
		o->min_margin_h1 = o->min_margin > o->min_margin_h1 ? o->min_margin : o->min_margin_h1;
	wl_err_clear(&err);
	if (x->ids && wl_track_parse_ids(x->ids, o, &err) != WL_OK)
		return cli_usage_error(cmd, "%s", err.msg);
	if (x->robots && wl_track_load_robots(x->robots, o, &err) != WL_OK)
		return cli_fail(cmd, &err);
	return 0;
}
