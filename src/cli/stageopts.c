/* stageopts.c: the option groups shared by the commands (see stageopts.h). */
#define _POSIX_C_SOURCE 200809L
#include "cli/stageopts.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

static int parse_mode(const char *arg, void *dest, char *msg, size_t cap)
{
	wl_track_mode *m = dest;
	if (strcmp(arg, "tag") == 0)
		*m = WL_TRACK_TAG;
	else if (strcmp(arg, "colour") == 0 || strcmp(arg, "color") == 0)
		*m = WL_TRACK_COLOUR;
	else
		return snprintf(msg, cap, "give tag or colour"), 1;
	return 0;
}

static int parse_family(const char *arg, void *dest, char *msg, size_t cap)
{
	wl_track_opts *o = dest;
	if (!arg[0] || strlen(arg) >= sizeof o->family)
		return snprintf(msg, cap, "unknown family: give tag36h11, tag25h9, tag16h5, ..."), 1;
	snprintf(o->family, sizeof o->family, "%s", arg);
	return 0;
}

static int parse_smoother(const char *arg, void *dest, char *msg, size_t cap)
{
	wl_clean_smoother *s = dest;
	if (strcmp(arg, "rts") == 0)
		*s = WL_CLEAN_RTS;
	else if (strcmp(arg, "sg") == 0)
		*s = WL_CLEAN_SG;
	else
		return snprintf(msg, cap, "give rts or sg"), 1;
	return 0;
}

static int parse_model(const char *arg, void *dest, char *msg, size_t cap)
{
	int *dim = dest;
	if (strcmp(arg, "cv") == 0)
		*dim = 2;
	else if (strcmp(arg, "ca") == 0)
		*dim = 3;
	else
		return snprintf(msg, cap, "give cv or ca"), 1;
	return 0;
}

static int parse_trim(const char *arg, void *dest, char *msg, size_t cap)
{
	wl_clean_params *p = dest;
	double v;
	if (strcmp(arg, "auto") == 0)
		p->trim = WL_TRIM_AUTO;
	else if (strcmp(arg, "none") == 0)
		p->trim = WL_TRIM_NONE;
	else if (cli_parse_double(arg, &v) && v >= 0 && isfinite(v)) {
		p->trim = WL_TRIM_FIXED;
		p->trim_s = v;
	} else
		return snprintf(msg, cap, "give auto, none or seconds"), 1;
	return 0;
}

static int parse_tank(const char *arg, void *dest, char *msg, size_t cap)
{
	cli_stages *s = dest;
	double v[4];
	char buf[256], *tok, *save = NULL;
	int n = 0;
	if (strlen(arg) < sizeof buf) {
		snprintf(buf, sizeof buf, "%s", arg);
		for (tok = strtok_r(buf, ",", &save); tok && n <= 4; tok = strtok_r(NULL, ",", &save))
			if (n == 4 || !cli_parse_double(tok, &v[n++]))
				n = 5;
	}
	if (n != 4 || !(v[2] > v[0]) || !(v[3] > v[1]))
		return snprintf(msg, cap, "give X0,Y0,X1,Y1 in metres with X1>X0, Y1>Y0"), 1;
	memcpy(s->tank, v, sizeof v);
	s->have_tank = 1;
	return 0;
}

static int parse_readout_ms(const char *arg, void *dest, char *msg, size_t cap)
{
	double *readout_s = dest, ms;
	if (!cli_parse_double(arg, &ms) || !(ms >= 0 && ms <= 999))
		return snprintf(msg, cap, "give the readout in ms, from 0 (global shutter) to 999"), 1;
	*readout_s = ms / 1000.0;
	return 0;
}

static void track_table(cli_stages *s)
{
	wl_track_opts *t = &s->p.track;
	{
		cli_opt margin = CLI_OPT_NUM("min-margin", "M",
		                             "minimum decision margin (default 20; 60 with 1 bit corrected)",
		                             &t->min_margin, 0, 1000);
		const cli_opt track[] = {
		        CLI_OPT_SECTION("Tracking:"),
		        CLI_OPT_FN("mode", "tag|colour", "AprilTags (default) or coloured caps", &t->mode,
		                   parse_mode),
		        CLI_OPT_FN("family", "NAME",
		                   "tag family: tag36h11 (default), tag25h9, tag16h5,\ntagStandard41h12, "
		                   "tagCircle21h7",
		                   t, parse_family),
		        CLI_OPT_STR("ids", 0, "3,7", "track only these tag ids (listed from the first frame)",
		                    &s->ids),
		        CLI_OPT_STR("robots", 0, "ROBOTS.csv",
		                    "per robot: "
		                    "id,plane_height_m,heading_offset_rad,\nbody_diameter_m,front_hsv_lo,"
		                    "front_hsv_hi,back_hsv_lo,\nback_hsv_hi (hsv as \"h,s,v\", hue 0-179)",
		                    &s->robots),
		        CLI_OPT_NUM("plane-height-m", "Z",
		                    "marker plane height above the floor (default: CAL.json's)",
		                    &t->plane_height_m, -10, 10),
		        CLI_OPT_NUM("rescan-s", "S", "full-frame search for new robots every S s (default 2)",
		                    &t->rescan_s, 0, 1e6),
		        CLI_OPT_FLOAT("decimate", "F",
		                      "AprilTag quad_decimate for full-frame searches (default 2)",
		                      &t->quad_decimate, 1, 8),
		        CLI_OPT_FLOAT("window-decimate", "F",
		                      "quad_decimate inside windows (default: 2 for tags >= 32 px,\nelse 1)",
		                      &t->window_decimate, 1, 8),
		        CLI_OPT_FLOAT("quad-sigma", "S",
		                      "blur before segmentation, px (default 0; 0.8 for noisy clips)",
		                      &t->quad_sigma, 0, 10),
		        CLI_OPT_NUM("sharpening", "F", "AprilTag decode_sharpening (default 0.25)",
		                    &t->decode_sharpening, 0, 10),
		        CLI_OPT_INT("max-hamming", 0, "N", "corrected bits accepted: 0 (default) or 1",
		                    &t->max_hamming, 0, 1),
		        margin,
		        CLI_OPT_NUM("hold-max-s", "S",
		                    "hold a robot the detector misses for up to S s after its\nlast "
		                    "detection (status held; default 3; 0: never)",
		                    &t->hold_max_s, 0, 60),
		        CLI_OPT_NUM("hold-min-score", "Q", "lowest match quality held, 0-1 (default 0.4)",
		                    &t->hold_min_score, 0, 1),
		        CLI_OPT_FN(
		                "readout-ms", "R",
		                "rolling shutter: top-to-bottom readout of the coded rows,\nms (default: "
		                "CAL.json's readout_ms, else 0); each pose is\ntimed by its row (t_detect_s)",
		                &t->readout_s, parse_readout_ms),
		        CLI_OPT_INT("threads", 0, "N", "decoder threads (default: all cores)",
		                    &s->p.decode_threads, 0, 64),
		        CLI_OPT_SECTION("Camera watch:"),
		        CLI_OPT_NUM("watch-period-s", "S",
		                    "look at the floor markers every S s (default 0.5)", &s->p.watch.period_s,
		                    0.01, 1e6),
		        CLI_OPT_NUM("watch-threshold-px", "P",
		                    "a marker shift above P px is a camera move (default 0.5)",
		                    &s->p.watch.threshold_px, 0.01, 1000),
		        CLI_OPT_FLAG("no-watch", 0, "do not watch the camera (no re-registration on a move)",
		                     &s->no_watch),
		        CLI_OPT_END};
		_Static_assert(sizeof track <= sizeof s->track, "cli_stages.track is too small");
		memcpy(s->track, track, sizeof track);
		for (cli_opt *o = s->track; o->kind != CLI_END; o++)
			if (o->dest == &t->min_margin)
				o->seen = &s->margin_seen;
	}
}

static void clean_table(cli_stages *s)
{
	wl_clean_params *c = &s->p.clean;
	{
		const cli_opt clean[] = {
		        CLI_OPT_SECTION("Smoothing:"),
		        CLI_OPT_FN("smoother", "rts|sg", "Rauch-Tung-Striebel (default) or Savitzky-Golay",
		                   &c->smoother, parse_smoother),
		        CLI_OPT_FN("model", "cv|ca", "constant velocity (default) or acceleration (rts)",
		                   &c->model_dim, parse_model),
		        CLI_OPT_INT("sg-window", 0, "N", "Savitzky-Golay points, odd (default 11)",
		                    &c->sg_window, 0, 0),
		        CLI_OPT_INT("sg-order", 0, "P", "Savitzky-Golay polynomial order (default 2)",
		                    &c->sg_order, 0, 0),
		        CLI_OPT_NUM("sigma-pos-m", "S", "position noise (default: estimated)",
		                    &c->sigma_pos_m, 0, 0),
		        CLI_OPT_NUM("sigma-heading-rad", "S", "heading noise (default: estimated)",
		                    &c->sigma_heading_rad, 0, 0),
		        CLI_OPT_NUM("q-pos", "Q", "process noise, m^2/s^3 (default: max. likelihood)",
		                    &c->q_pos, 0, 0),
		        CLI_OPT_NUM("q-heading", "Q", "process noise, rad^2/s^3 (default: max. likelihood)",
		                    &c->q_heading, 0, 0),
		        CLI_OPT_NUM("gate", "P", "chi-square gate probability (default 0.999)", &c->gate_prob,
		                    0, 0),
		        CLI_OPT_NUM("max-reject", "F",
		                    "widen the noise model when more than this share\nof the detections "
		                    "would be rejected (default 0.03)",
		                    &c->max_reject_frac, 0, 0),
		        CLI_OPT_NUM("rate", "HZ", "resample evenly at HZ from the smoothed state",
		                    &c->rate_hz, 0, 0),
		        CLI_OPT_SECTION("Gaps and trimming:"),
		        CLI_OPT_NUM("max-gap-s", "S", "bridge gaps up to S seconds (default 0.5)",
		                    &c->max_gap_s, 0, 0),
		        CLI_OPT_NUM("min-segment-s", "S", "leave out shorter segments (default 1.0)",
		                    &c->min_segment_s, 0, 0),
		        CLI_OPT_FN("trim", "auto|none|S",
		                   "start: steady motion (default), none, or S seconds", c, parse_trim),
		        CLI_OPT_NUM("settle-tol", "F", "relative speed tolerance when steady (default 0.02)",
		                    &c->settle_tol, 0, 0),
		        CLI_OPT_NUM("default-window-s", "S",
		                    "settling window without oscillation (default 1.0)", &c->default_window_s,
		                    0, 0),
		        CLI_OPT_SECTION("Tank wall:"),
		        CLI_OPT_FN("tank", "X0,Y0,X1,Y1",
		                   "tank rectangle in metres (instead of CAL.json's outline)", s, parse_tank),
		        CLI_OPT_NUM("wall-margin-m", "M", "cut when closer (default: half the body diameter)",
		                    &c->wall_margin_m, 0, 0),
		        CLI_OPT_END};
		memcpy(s->clean, clean, sizeof clean);
	}
}

static void measure_tables(cli_stages *s)
{
	{
		const cli_opt measure[] = {
		        CLI_OPT_SECTION("Measuring:"),
		        CLI_OPT_POS(
		                "commanded-period-s", "P",
		                "oscillation period the robot was commanded,\ncompared with the measured one",
		                &s->p.measure.commanded_period_s),
		        CLI_OPT_POS("min-arc-deg", "A",
		                    "arcs shorter than A degrees count as straight (default 5)",
		                    &s->p.measure.run.min_arc_deg),
		        CLI_OPT_SECTION("Uncertainty budget (with a calibration; docs/measure.md):"),
		        CLI_OPT_NUM("plane-height-tol-m", "T",
		                    "the marker plane height's tolerance (default 0.002;\nROBOTS.csv's "
		                    "plane_height_tol_m per robot)",
		                    &s->p.tol.plane_height_sd_m, 0, 1),
		        CLI_OPT_NUM("water-depth-tol-m", "T", "the water depth's tolerance (default 0.003)",
		                    &s->p.tol.water_depth_sd_m, 0, 1),
		        CLI_OPT_NUM("hfov-tol", "F",
		                    "relative tolerance of a focal length from --hfov-deg\n(default 0.02)",
		                    &s->p.tol.focal_sd_frac, 0, 1),
		        CLI_OPT_NUM("principal-tol", "F",
		                    "an assumed principal point's tolerance, share of\nthe width (default "
		                    "0.02)",
		                    &s->p.tol.principal_sd_frac, 0, 1),
		        CLI_OPT_END};
		memcpy(s->measure, measure, sizeof measure);
	}
	{
		cli_opt body = CLI_OPT_POS(
		        "body-diameter-m", "D",
		        "robot size: the wall cut (default 0.1) and\nradius_body_diameters", &s->body_m);
		body.alias = "body-m";
		s->body[0] = body;
		s->body[1] = (cli_opt)CLI_OPT_END;
	}
}

void cli_stages_init(cli_stages *s)
{
	memset(s, 0, sizeof *s);
	wl_process_opts_init(&s->p);
	s->body_m = NAN;
	track_table(s);
	clean_table(s);
	measure_tables(s);
}

int cli_stages_finish(const char *cmd, cli_stages *s)
{
	wl_track_opts *t = &s->p.track;
	wl_clean_params *c = &s->p.clean;
	wl_err err;
	wl_err_clear(&err);
	if (s->ids && s->robots)
		return cli_usage_error(cmd, "give --ids or --robots, not both (ROBOTS.csv lists the ids)");
	if (s->margin_seen)
		t->min_margin_h1 = t->min_margin > t->min_margin_h1 ? t->min_margin : t->min_margin_h1;
	if (isfinite(s->body_m)) {
		c->body_diameter_m = s->body_m;
		s->p.measure.run.body_diameter_m = s->body_m;
	}
	if (s->have_tank) {
		double *v = s->tank;
		double r[4][2] = {{v[0], v[1]}, {v[2], v[1]}, {v[2], v[3]}, {v[0], v[3]}};
		c->n_outline = 4;
		memcpy(c->outline_m, r, sizeof r);
		s->p.tank_rect = 1;
	}
	if (wl_clean_params_check(c, &err))
		return cli_usage_error(cmd, "%s", err.msg);
	if (s->ids && wl_track_parse_ids(s->ids, t, &err))
		return cli_usage_error(cmd, "%s", err.msg);
	if (s->robots && wl_track_load_robots(s->robots, t, &err))
		return cli_fail(cmd, &err);
	if (wl_track_opts_check(t, &err)) /* options that contradict each other */
		return cli_usage_error(cmd, "%s", err.msg);
	s->p.watch.enabled = !s->no_watch;
	snprintf(s->p.watch.family, sizeof s->p.watch.family, "%s", t->family);
	return CLI_CONTINUE;
}
