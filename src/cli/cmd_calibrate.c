/* cmd_calibrate.c: `wakeline calibrate`: floor markers or hand-picked points -> CAL.json. */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "calib/calib.h"
#include "calib/detect.h"
#include "calib/lens.h"
#include "cli/cli.h"
#include "cv/cv.h"
#include "decode/decode.h"
#include "track/track.h"

const char cmd_calibrate_summary[] = "floor markers or picked points -> camera model (CAL.json)";

static const char HEAD[] =
        "usage: wakeline calibrate SOURCE (--layout LAYOUT.csv | --points POINTS.csv) -o CAL.json [options]\n"
        "\n"
        "Finds the camera over the tank: the floor homography, the focal length, the\n"
        "camera's position and tilt, and (with --water-depth-m) refraction at the\n"
        "water surface.  SOURCE is a photo (PNG/JPEG) or a clip from the same camera\n"
        "setting as the runs.\n"
        "\n";
static const char TAIL[] =
        "\n"
        "Routes to the focal length: --lens; markers at two or more heights (z_m in the\n"
        "layout, e.g. one on a block: also fixes the principal point); --camera-height-m;\n"
        "--refine-with (the robots' tags over a run); an oblique view; --hfov-deg.\n"
        "Without --lens, distortion is estimated from the markers when they cover the\n"
        "image well.  The quality report goes to standard output.\n"
        "Exit status: 0 ok, 1 failure, 2 usage error.\n";

typedef struct {
	const char *source, *layout, *points, *out, *lens, *family, *tank, *refine, *robots;
	double tag_size_m, tag_tol_m;
	int refine_frames;
	double hfov_deg, plane_m, water_m, water_index, at_s, span_s;
	double cam_h_m, cam_h_tol_m, plane_tol_m, water_tol_m;
	int quiet, no_distortion;
} options;

typedef struct {
	int n_outline;
	double outline[WL_CALIB_MAX_OUTLINE][2];
} outline_t;

static int parse_tank(const char *s, outline_t *o)
{
	const char *p = s;
	o->n_outline = 0;
	while (*p) {
		char *end;
		double x, y;
		if (o->n_outline >= WL_CALIB_MAX_OUTLINE)
			return 0;
		x = strtod(p, &end);
		if (end == p || *end != ',')
			return 0;
		p = end + 1;
		y = strtod(p, &end);
		if (end == p || !isfinite(x) || !isfinite(y))
			return 0;
		o->outline[o->n_outline][0] = x;
		o->outline[o->n_outline][1] = y;
		o->n_outline++;
		p = end;
		if (*p == ';')
			p++;
		else if (*p)
			return 0;
	}
	return o->n_outline >= 3;
}

static int is_image(const char *path)
{
	const char *dot = strrchr(path, '.');
	return dot && (!strcasecmp(dot, ".png") || !strcasecmp(dot, ".jpg") || !strcasecmp(dot, ".jpeg") ||
	               !strcasecmp(dot, ".bmp") || !strcasecmp(dot, ".tif") || !strcasecmp(dot, ".tiff"));
}

#define CLIP_FRAMES 20 /* frames of the span handed to the detector (spread evenly) */

/* Frames from --at over --span seconds of a clip; corrupt frames skipped. */
static wl_status read_clip(const options *op, wl_calib_tags *tags, int *w, int *h, int *rotation_deg,
                           int *frames, wl_err *err)
{
	wl_decoder *dec = NULL;
	const wl_frame *fr;
	const wl_video_info *info;
	double next_t = op->at_s, step;
	wl_status st = wl_decoder_open(op->source, 0, 0, &dec, err);
	if (st)
		return st;
	info = wl_decoder_info(dec);
	*w = info->width_px;
	*h = info->height_px;
	*rotation_deg = info->rotation_deg;
	step = op->span_s / CLIP_FRAMES;
	if (op->at_s > 0 && (st = wl_decoder_seek(dec, op->at_s, err)))
		goto out;
	while (!(st = wl_decoder_next(dec, &fr, err)) && fr) {
		int seen;
		if (fr->t_s > op->at_s + op->span_s)
			break;
		if (fr->t_s + 1e-9 < next_t || fr->corrupt)
			continue;
		next_t = fr->t_s + step;
		(*frames)++;
		if (tags && (st = wl_calib_tags_add(tags, fr->luma, fr->width_px, fr->height_px,
		                                    fr->luma_stride, &seen, err)))
			break;
		if (!tags)
			break;
	}
	if (!st && *frames == 0)
		st = wl_err_set(err, WL_EDECODE,
		                "'%s': no frames between %.2f s and %.2f s: check --at and --span",
		                op->source, op->at_s, op->at_s + op->span_s);
out:
	wl_decoder_destroy(dec);
	return st;
}

/* Frames of SOURCE handed to the tag detector (when tags != NULL); gives
 * the image size and orientation. */
static wl_status read_source(const options *op, wl_calib_tags *tags, int *w, int *h, int *rotation_deg,
                             int *frames, wl_err *err)
{
	*rotation_deg = 0;
	*frames = 0;
	if (is_image(op->source)) {
		uint8_t *px = NULL;
		int seen;
		wl_status st = wl_cv_imread(op->source, 1, &px, w, h, err);
		if (!st && tags)
			st = wl_calib_tags_add(tags, px, *w, *h, *w, &seen, err);
		free(px);
		*frames = 1;
		return st;
	}
	return read_clip(op, tags, w, h, rotation_deg, frames, err);
}

#define MOVE_WARN_PX 1.5 /* a marker's centre wandering more than this over the frames (our choice) */
/* farther than this, more likely a robot wearing the marker's tag id than a camera shake (our choice) */
#define ROBOT_TAG_PX 20.0
#define MIN_MARGIN 40.0 /* median decision margin below this: a weak detection (our choice) */

/* Detected markers -> correspondences: centre, and the corners when the
 * layout gives the marker's size. */
static int markers_to_points(const wl_calib_tags *tags, const wl_calib_marker *marks, int n_marks,
                             wl_calib_point *pts, int max, int *n_seen, const wl_diag *diag)
{
	int n = 0;
	*n_seen = 0;
	for (int i = 0; i < n_marks; i++) {
		wl_tag_obs o;
		const wl_calib_marker *m = &marks[i];
		if (!wl_calib_tags_get(tags, m->id, &o)) {
			wl_diag_warn(diag, "calibrate",
			             "marker %ld (layout line %ld) was not found: check that it is in view, "
			             "lit and flat",
			             m->id, m->line);
			continue;
		}
		(*n_seen)++;
		if (o.move_px > ROBOT_TAG_PX)
			wl_diag_warn(
			        diag, "calibrate",
			        "marker %ld is seen up to %.1f px from its usual place: a robot may wear "
			        "the same tag id (give the robots ids that no floor marker uses), or the "
			        "camera moved (fix it, and turn image stabilisation off)",
			        m->id, o.move_px);
		else if (o.move_px > MOVE_WARN_PX)
			wl_diag_warn(diag, "calibrate",
			             "marker %ld moves by up to %.1f px between frames: turn image "
			             "stabilisation off "
			             "and fix the camera",
			             m->id, o.move_px);
		if (o.margin < MIN_MARGIN)
			wl_diag_warn(diag, "calibrate",
			             "marker %ld is weakly detected (decision margin %.0f, below %.0f): more "
			             "light, "
			             "less glare, or a larger print",
			             m->id, o.margin, MIN_MARGIN);
		if (n >= max)
			break;
		memset(&pts[n], 0, sizeof pts[n]);
		snprintf(pts[n].id, sizeof pts[n].id, "%ld", m->id);
		pts[n].u_px = o.c[0];
		pts[n].v_px = o.c[1];
		pts[n].x_m = m->x_m;
		pts[n].y_m = m->y_m;
		pts[n].z_m = m->z_m;
		n++;
		if (m->size_m > 0) {
			double xy[4][2];
			wl_calib_marker_corners(m, xy);
			for (int k = 0; k < 4 && n < max; k++, n++) {
				memset(&pts[n], 0, sizeof pts[n]);
				snprintf(pts[n].id, sizeof pts[n].id, "%ld.c%d", m->id, k);
				pts[n].u_px = o.p[k][0];
				pts[n].v_px = o.p[k][1];
				pts[n].x_m = xy[k][0];
				pts[n].y_m = xy[k][1];
				pts[n].z_m = m->z_m;
			}
		}
	}
	return n;
}

/* ---- the robots' tags over a run (--refine-with) ---- */

typedef struct {
	wl_tag_sighting *s;
	int n, cap;
} sightings;

/* The size and plane of tag id, or 0 when it is not a robot of known size. */
static int robot_tag(const options *op, const wl_track_opts *ro, const wl_calib_marker *marks, int n_marks,
                     int id, double *size_m, double *plane_m)
{
	for (int i = 0; i < n_marks; i++)
		if (marks[i].id == id)
			return 0; /* a floor marker */
	*size_m = op->tag_size_m;
	*plane_m = op->plane_m;
	if (ro->n_robots > 0) {
		const wl_robot_spec *r = NULL;
		for (int i = 0; i < ro->n_robots; i++)
			if (ro->robots[i].id == id)
				r = &ro->robots[i];
		if (!r)
			return 0;
		if (r->tag_size_m > 0)
			*size_m = r->tag_size_m;
		if (!isnan(r->plane_height_m))
			*plane_m = r->plane_height_m;
	}
	return *size_m > 0 && *plane_m > 0;
}

/* Tags in up to op->refine_frames frames spread over the clip. */
static wl_status collect_sightings(const options *op, const wl_track_opts *ro, const wl_calib_marker *marks,
                                   int n_marks, int w, int h, sightings *out, int *frames, wl_err *err)
{
	wl_decoder *dec = NULL;
	wl_tagdet *det = NULL;
	const wl_frame *fr;
	wl_tagdet_hit hits[64];
	const wl_video_info *info;
	double step_s, next_t = 0;
	wl_status st;
	cli_progress prog;
	*frames = 0;
	if ((st = wl_decoder_open(op->refine, 0, 0, &dec, err)) ||
	    (st = wl_tagdet_create(op->family, 0, &det, err)))
		goto out;
	info = wl_decoder_info(dec);
	if (info->width_px != w || info->height_px != h) {
		st = wl_err_set(err, WL_ECALIB,
		                "'%s' is %dx%d but the calibration source is %dx%d: use a run of the same "
		                "camera setting",
		                op->refine, info->width_px, info->height_px, w, h);
		goto out;
	}
	step_s = info->duration_s > 0 ? info->duration_s / op->refine_frames : 0;
	wl_tagdet_set(det, 2.0f, 0.0f, 0.25);
	cli_progress_init(&prog, op->quiet);
	while (!(st = wl_decoder_next(dec, &fr, err)) && fr) {
		int nh;
		if (fr->corrupt || fr->t_s + 1e-9 < next_t)
			continue;
		next_t = fr->t_s + step_s;
		(*frames)++;
		nh = wl_tagdet_detect(det, fr->luma, fr->luma_stride, 0, 0, fr->width_px, fr->height_px, hits,
		                      64);
		for (int i = 0; i < nh; i++) {
			double size, plane, e = 3;
			int inside = 1;
			if (hits[i].hamming != 0 || hits[i].margin < 30 ||
			    !robot_tag(op, ro, marks, n_marks, hits[i].id, &size, &plane))
				continue;
			for (int k = 0; k < 4; k++)
				inside &= hits[i].p[k][0] >= e && hits[i].p[k][1] >= e &&
				          hits[i].p[k][0] <= w - 1 - e && hits[i].p[k][1] <= h - 1 - e;
			if (!inside)
				continue;
			if (out->n == out->cap) {
				int cap = out->cap ? 2 * out->cap : 256;
				wl_tag_sighting *ns = realloc(out->s, sizeof *ns * (size_t)cap);
				if (!ns) {
					st = wl_err_set(err, WL_ENOMEM,
					                "out of memory for the tag sightings");
					goto out;
				}
				out->s = ns;
				out->cap = cap;
			}
			memcpy(out->s[out->n].p, hits[i].p, sizeof hits[i].p);
			out->s[out->n].size_m = size;
			out->s[out->n].plane_height_m = plane;
			out->n++;
		}
		cli_progress_update(&prog, "calibrate: %s %.1f s, %d tag sightings", op->refine, fr->t_s,
		                    out->n);
	}
	cli_progress_done(&prog);
out:
	wl_tagdet_destroy(det);
	wl_decoder_destroy(dec);
	return st;
}

static void bounding_outline(const wl_calib_point *pts, int n, const wl_calib_marker *marks, int n_marks,
                             outline_t *o)
{
	double x0 = INFINITY, y0 = INFINITY, x1 = -INFINITY, y1 = -INFINITY;
	for (int i = 0; i < n; i++) {
		x0 = fmin(x0, pts[i].x_m);
		x1 = fmax(x1, pts[i].x_m);
		y0 = fmin(y0, pts[i].y_m);
		y1 = fmax(y1, pts[i].y_m);
	}
	for (int i = 0; i < n_marks; i++) {
		double r = marks[i].size_m * 0.7072; /* half diagonal */
		x0 = fmin(x0, marks[i].x_m - r);
		x1 = fmax(x1, marks[i].x_m + r);
		y0 = fmin(y0, marks[i].y_m - r);
		y1 = fmax(y1, marks[i].y_m + r);
	}
	double v[4][2] = {{x0, y0}, {x1, y0}, {x1, y1}, {x0, y1}};
	memcpy(o->outline, v, sizeof v);
	o->n_outline = 4;
}

/* Warns when the outline reaches far beyond the points (extrapolation). */
static void check_outline(const wl_calib *cal, const wl_diag *diag)
{
	double x0 = INFINITY, y0 = INFINITY, x1 = -INFINITY, y1 = -INFINITY, size, worst = 0;
	for (int i = 0; i < cal->n_points; i++) {
		if (!cal->points[i].used)
			continue;
		x0 = fmin(x0, cal->points[i].x_m);
		x1 = fmax(x1, cal->points[i].x_m);
		y0 = fmin(y0, cal->points[i].y_m);
		y1 = fmax(y1, cal->points[i].y_m);
	}
	size = fmax(x1 - x0, y1 - y0);
	for (int i = 0; i < cal->n_outline; i++) {
		double dx = fmax(0, fmax(x0 - cal->outline_m[i][0], cal->outline_m[i][0] - x1));
		double dy = fmax(0, fmax(y0 - cal->outline_m[i][1], cal->outline_m[i][1] - y1));
		worst = fmax(worst, hypot(dx, dy));
	}
	if (worst > 0.25 * size)
		wl_diag_warn(diag, "calibrate",
		             "the tank outline reaches %.2f m beyond the markers: positions out there are "
		             "extrapolated; put markers near the tank's corners",
		             worst);
	/* the outline must be counter-clockwise */
}

static void make_ccw(wl_calib *cal)
{
	double a = 0;
	int n = cal->n_outline;
	for (int i = 0; i < n; i++) {
		const double *p = cal->outline_m[i], *q = cal->outline_m[(i + 1) % n];
		a += p[0] * q[1] - q[0] * p[1];
	}
	if (a < 0)
		for (int i = 0; i < n / 2; i++) {
			double t[2] = {cal->outline_m[i][0], cal->outline_m[i][1]};
			cal->outline_m[i][0] = cal->outline_m[n - 1 - i][0];
			cal->outline_m[i][1] = cal->outline_m[n - 1 - i][1];
			cal->outline_m[n - 1 - i][0] = t[0];
			cal->outline_m[n - 1 - i][1] = t[1];
		}
}

static void print_report(const options *op, const wl_calib *cal, const wl_calib_report *rep,
                         const wl_lens *lens)
{
	double C[3];
	const wl_calib_point *w = rep->worst >= 0 ? &cal->points[rep->worst] : NULL;
	wl_camera_position(&cal->cam, C);
	printf("  points: %d used of %d%s\n", rep->n_used, cal->n_points,
	       rep->outlier >= 0 ? " (one left out as an outlier)" : "");
	if (!strcmp(cal->intrinsics_source, "lens"))
		printf("  intrinsics: from %s (lens RMS %.3f px)\n", op->lens, lens->rms_px);
	else if (!strcmp(cal->route, WL_CALIB_ROUTE_HEIGHT) || !strcmp(cal->route, WL_CALIB_ROUTE_TAGS))
		printf("  intrinsics: focal length from the floor homography and the camera height, refined "
		       "to %.1f px\n",
		       cal->cam.K[0]);
	else if (!strcmp(cal->route, WL_CALIB_ROUTE_RAISED))
		printf("  intrinsics: from the points at several heights, f %.1f px, principal point (%.1f, "
		       "%.1f) px\n",
		       cal->cam.K[0], cal->cam.K[2], cal->cam.K[5]);
	else if (!strcmp(cal->intrinsics_source, "homography"))
		printf("  intrinsics: the view is oblique enough: focal length from the homography "
		       "(Zhang 2000), refined to %.1f px\n",
		       cal->cam.K[0]);
	else if (!strcmp(cal->intrinsics_source, "hfov"))
		printf("  intrinsics: from --hfov-deg %g (the view is too close to nadir to give the focal "
		       "length)\n",
		       op->hfov_deg);
	else
		printf("  intrinsics: from the points at several heights (projection DLT), f %.1f px\n",
		       cal->cam.K[0]);
	if (rep->focal_determined && strcmp(cal->intrinsics_source, "homography"))
		printf("  (the homography alone gives f %.1f px)\n", rep->focal_from_h_px);
	printf("  %s\n", rep->route_note);
	if (cal->principal_assumed && isfinite(cal->principal_offset_mm_per_m))
		printf("  principal point: assumed at (%.1f, %.1f) px, +- %.0f px: positions on a plane h "
		       "above "
		       "the floor may be offset by up to h x %.1f mm/m (%.2f mm at the plane height %.3f m); "
		       "radii and distances are not affected; a marker raised on a block fixes it\n",
		       cal->cam.K[2], cal->cam.K[5], cal->principal_sd_px, cal->principal_offset_mm_per_m,
		       rep->principal_offset_mm, cal->plane_height_m);
	if (rep->distortion_note[0])
		printf("  %s\n", rep->distortion_note);
	printf("  camera: %.3f m above the floor, tilted %.1f deg from nadir, over (%.3f, %.3f) m\n", C[2],
	       rep->tilt_deg, C[0], C[1]);
	if (cal->cam.water_depth_m > 0)
		printf("  water: floor under %.3f m, index %.4f (refraction by Snell's law)\n",
		       cal->cam.water_depth_m, cal->cam.water_index);
	printf("  RMS %.3f px, %.2f mm", cal->rms_px, cal->rms_mm);
	if (w)
		printf("; worst point '%s' %.3f px (%.2f mm)", w->id, w->residual_px, w->residual_mm);
	printf("\n  plane height %.3f m\n", cal->plane_height_m);
}

static int parse_args(int argc, char **argv, options *op)
{
	const cli_opt tab[] = {
	        CLI_OPT_STR(
	                "layout", 0, "FILE",
	                "floor markers: marker_id,x_m,y_m[,z_m,size_m,yaw_rad]; the\nmarkers are found in "
	                "SOURCE (AprilTag)",
	                &op->layout),
	        CLI_OPT_STR("points", 0, "FILE", "hand-picked points instead: u_px,v_px,x_m,y_m[,z_m][,id]",
	                    &op->points),
	        CLI_OPT_STR("output", 'o', "FILE", "CAL.json to write (not written on error)", &op->out),
	        CLI_OPT_STR("lens", 0, "FILE", "LENS.json from 'wakeline lens' (intrinsics and distortion)",
	                    &op->lens),
	        CLI_OPT_NUM("hfov-deg", "A",
	                    "horizontal field of view, when neither the lens nor the view\ngives the focal "
	                    "length",
	                    &op->hfov_deg, 0, 179),
	        CLI_OPT_NUM("plane-height-m", "H",
	                    "height of the robots' marker plane above the floor (default 0)", &op->plane_m,
	                    -10, 10),
	        CLI_OPT_NUM("water-depth-m", "D", "the floor markers lie under D metres of still water",
	                    &op->water_m, 0, 100),
	        CLI_OPT_NUM("water-index", "N", "refractive index of the water (default 1.333)",
	                    &op->water_index, 1, 3),
	        CLI_OPT_STR("family", 0, "NAME", "tag family (default tag36h11)", &op->family),
	        CLI_OPT_NUM("at", "T", "clip: start at T seconds (default 0)", &op->at_s, 0, 1e9),
	        CLI_OPT_POS("span", "S", "clip: use S seconds of frames (default 2)", &op->span_s),
	        CLI_OPT_STR("tank", 0, "\"x,y;x,y;...\"",
	                    "tank outline in metres (default: the markers' bounding rectangle)", &op->tank),
	        CLI_OPT_FLAG("quiet", 'q', "no progress line", &op->quiet),
	        CLI_OPT_SECTION("What the lab measured (routes without a field-of-view guess):"),
	        CLI_OPT_NUM("camera-height-m", "H",
	                    "the lens's height above the floor (tape measure): fixes the\nfocal length of a "
	                    "view that looks straight down",
	                    &op->cam_h_m, 0, 1000),
	        CLI_OPT_NUM("camera-height-tol-m", "T", "its tolerance (default 0.01)", &op->cam_h_tol_m, 0,
	                    100),
	        CLI_OPT_NUM(
	                "plane-height-tol-m", "T",
	                "tolerance of --plane-height-m, recorded for uncertainty\nbudgets (default 0.002)",
	                &op->plane_tol_m, 0, 100),
	        CLI_OPT_NUM("water-depth-tol-m", "T", "tolerance of --water-depth-m (default 0.003)",
	                    &op->water_tol_m, 0, 100),
	        CLI_OPT_FLAG("no-distortion", 0, "do not estimate lens distortion from the markers",
	                     &op->no_distortion),
	        CLI_OPT_STR("refine-with", 0, "CLIP",
	                    "measure the camera height from the robots' tags seen in a run\n(needs their "
	                    "printed size and plane height above the floor)",
	                    &op->refine),
	        CLI_OPT_NUM("tag-size-m", "S", "printed side of the robots' tags (black square), metres",
	                    &op->tag_size_m, 0, 10),
	        CLI_OPT_NUM("tag-size-tol-m", "T", "its tolerance (default 0.0002)", &op->tag_tol_m, 0, 1),
	        CLI_OPT_STR("robots", 0, "ROBOTS.csv",
	                    "per robot: id, tag_size_m, plane_height_m (other columns ignored)", &op->robots),
	        CLI_OPT_INT("refine-frames", 0, "N",
	                    "frames of CLIP searched for tags (default 150, spread over it)",
	                    &op->refine_frames, 10, 100000),
	        CLI_OPT_END};
	const cli_opt *tables[] = {tab, NULL};
	int rc, first;
	memset(op, 0, sizeof *op);
	op->family = "tag36h11";
	op->water_index = 1.333;
	op->span_s = 2;
	op->refine_frames = 150;
	if ((rc = cli_parse("calibrate", HEAD, TAIL, tables, argc, argv, &first)) != CLI_CONTINUE)
		return rc;
	if (first != argc - 1)
		return cli_usage_error("calibrate", "give one SOURCE (a photo or a clip)");
	op->source = argv[first];
	if (!op->out)
		return cli_usage_error("calibrate", "-o CAL.json is required");
	if (!!op->layout == !!op->points)
		return cli_usage_error("calibrate", "give exactly one of --layout and --points");
	if (op->hfov_deg < 0 || op->hfov_deg >= 179)
		return cli_usage_error("calibrate", "--hfov-deg must lie between 0 and 179");
	if (op->water_m < 0 || op->water_index < 1 || op->water_index > 3)
		return cli_usage_error("calibrate",
		                       "--water-depth-m must be >= 0 and --water-index in [1, 3]");
	if (op->cam_h_m < 0 || op->cam_h_tol_m < 0 || op->plane_tol_m < 0 || op->water_tol_m < 0)
		return cli_usage_error("calibrate", "heights and tolerances must be >= 0");
	if (op->cam_h_tol_m > 0 && !(op->cam_h_m > 0))
		return cli_usage_error("calibrate", "--camera-height-tol-m needs --camera-height-m");
	if (op->tag_size_m < 0 || op->tag_tol_m < 0)
		return cli_usage_error("calibrate", "--tag-size-m and --tag-size-tol-m must be >= 0");
	if (op->refine && !op->layout)
		return cli_usage_error("calibrate", "--refine-with needs --layout (the floor markers)");
	if (op->refine && !(op->tag_size_m > 0) && !op->robots)
		return cli_usage_error("calibrate",
		                       "--refine-with needs the tags' printed size: --tag-size-m S or "
		                       "--robots ROBOTS.csv with a tag_size_m column");
	if (op->span_s <= 0 || op->at_s < 0)
		return cli_usage_error("calibrate", "--at must be >= 0 and --span > 0");
	return CLI_CONTINUE;
}

int cmd_calibrate(int argc, char **argv)
{
	options op;
	static wl_calib cal;
	static wl_calib_point pts[WL_CALIB_MAX_POINTS];
	static wl_calib_marker marks[WL_CALIB_MAX_POINTS];
	static wl_lens lens;
	static wl_track_opts robots;
	sightings sight = {0};
	wl_tagscale ts;
	wl_calib_report rep;
	wl_calib_opts co;
	wl_calib_tags *tags = NULL;
	outline_t outline = {0};
	wl_err err = {0};
	cli_diag cd;
	const wl_diag *diag;
	int n = 0, n_marks = 0, w = 0, h = 0, rot = 0, frames = 0, status = WL_EXIT_FAIL, r;
	wl_track_opts_init(&robots);
	if ((r = parse_args(argc, argv, &op)) != CLI_CONTINUE)
		return r;
	diag = cli_diag_init(&cd, "calibrate", op.quiet);
	if (op.tank && !parse_tank(op.tank, &outline))
		return cli_usage_error("calibrate",
		                       "--tank '%s': give 3 to %d corners as \"x,y;x,y;...\" in metres",
		                       op.tank, WL_CALIB_MAX_OUTLINE);
	if (op.lens && wl_lens_load(op.lens, &lens, &err))
		goto out;
	if (op.points && wl_calib_read_points(op.points, pts, WL_CALIB_MAX_POINTS, &n, &err))
		goto out;
	if (op.layout && (wl_calib_read_layout(op.layout, marks, WL_CALIB_MAX_POINTS, &n_marks, &err) ||
	                  wl_calib_tags_create(op.family, &tags, &err)))
		goto out;
	if (read_source(&op, tags, &w, &h, &rot, &frames, &err))
		goto out;
	printf("calibrate: %s -> %s\n", op.source, op.out);
	if (tags) {
		int seen;
		n = markers_to_points(tags, marks, n_marks, pts, WL_CALIB_MAX_POINTS, &seen, diag);
		printf("  markers: %d of %d found in %d frame%s\n", seen, n_marks, frames,
		       frames == 1 ? "" : "s");
		if (seen < 4) {
			wl_err_set(&err, WL_ECALIB,
			           "%s: only %d of the %d layout markers were found in '%s' (at least 4 are "
			           "needed): "
			           "check the --family, the lighting and that the markers are in view",
			           op.layout, seen, n_marks, op.source);
			goto out;
		}
	}
	memset(&co, 0, sizeof co);
	co.width_px = w;
	co.height_px = h;
	co.lens = op.lens ? &lens.cam : NULL;
	co.hfov_deg = op.hfov_deg;
	co.water_depth_m = op.water_m;
	co.water_index = op.water_index;
	co.plane_height_m = op.plane_m;
	co.rotation_deg = rot;
	co.camera_height_m = op.cam_h_m;
	co.camera_height_sd_m = op.cam_h_tol_m;
	co.plane_height_sd_m = op.plane_tol_m;
	co.water_depth_sd_m = op.water_tol_m;
	co.no_distortion = op.no_distortion;
	co.diag = diag;
	if (op.refine) {
		int rf = 0;
		if (op.robots && wl_track_load_robots(op.robots, &robots, &err))
			goto out;
		if (collect_sightings(&op, &robots, marks, n_marks, w, h, &sight, &rf, &err))
			goto out;
		printf("  robots' tags: %d sightings in %d frames of %s\n", sight.n, rf, op.refine);
		if (wl_calib_solve_tags(pts, n, &co, sight.s, sight.n, op.tag_tol_m, &cal, &rep, &ts, &err)) {
			wl_err_prefix(&err, err.code, "%s", op.refine);
			goto out;
		}
		printf("  camera height from the tags: %.4f +- %.4f m (spread %.4f, plane height %.4f, "
		       "printed "
		       "size %.4f); the tags' plane is %.4f of the floor's scale (%d of %d sightings kept)\n",
		       ts.height_m, ts.sd_m, ts.sd_stat_m, ts.sd_plane_m, ts.sd_size_m, ts.plane_scale,
		       ts.n_used, ts.n_sightings);
	} else if (wl_calib_solve(pts, n, &co, &cal, &rep, &err)) {
		wl_err_prefix(&err, err.code, "%s", op.points ? op.points : op.source);
		goto out;
	}
	if (!outline.n_outline)
		bounding_outline(pts, n, marks, n_marks, &outline);
	cal.n_outline = outline.n_outline;
	memcpy(cal.outline_m, outline.outline, sizeof outline.outline);
	make_ccw(&cal);
	snprintf(cal.source, sizeof cal.source, "%s", op.source);
	print_report(&op, &cal, &rep, &lens);
	check_outline(&cal, diag);
	if (wl_calib_save(op.out, &cal, &err))
		goto out;
	status = WL_EXIT_OK;
out:
	if (status != WL_EXIT_OK)
		cli_fail("calibrate", &err);
	wl_calib_tags_destroy(tags);
	free(sight.s);
	return cli_finish("calibrate", status);
}
