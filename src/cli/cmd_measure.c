/*
 * cmd_measure.c: `wakeline measure CLEAN.csv -o SUMMARY.json`, stage 5 of the
 * pipeline.  Streams CLEAN.csv (rows of segment >= 0 only), gathers one
 * segment of one robot at a time, hands it to wl_measure_run
 * (src/measure/measure.h) as soon as it ends, and writes one entry per robot
 * per segment plus the headline run of each robot (its longest segment).
 * Memory holds the open segment of each robot, not the whole file.
 */
#include <cjson/cJSON.h>
#include <getopt.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "core/afile.h"
#include "core/csvio.h"
#include "core/jsonio.h"
#include "measure/measure.h"
#include "wl_version.h"

const char cmd_measure_summary[] = "per-run measures (turning radius, speed, oscillation) from CLEAN.csv";

static const char usage_text[] =
        "usage: wakeline measure CLEAN.csv -o SUMMARY.json [options]\n"
        "\n"
        "Measures every analysed segment (segment >= 0) of every robot in CLEAN.csv:\n"
        "signed turning radius and curvature with a 95% interval, arc, path length,\n"
        "straightness, speed, yaw rate, heading drift, and the yaw and sway\n"
        "oscillation.  Each robot's longest segment is marked \"headline\": true and\n"
        "summarised on standard output.  Methods: docs/measure.md.\n"
        "\n"
        "options:\n"
        "  -o, --output FILE           SUMMARY.json to write (required)\n"
        "      --csv FILE              also write one row per run to FILE\n"
        "      --body-diameter-m D     body size, for radius_body_diameters\n"
        "      --commanded-period-s P  oscillation period the robot was commanded,\n"
        "                              compared with the measured one\n"
        "      --min-arc-deg A         arcs shorter than A degrees count as straight\n"
        "                              (default 5)\n"
        "  -q, --quiet                 no summary on standard output\n"
        "  -h, --help                  this text\n"
        "\n"
        "exit status: 0 ok, 1 failure, 2 usage error.\n";

#define ID_MAX 64

/* The rows of one open segment of one robot. */
typedef struct {
	char id[ID_MAX];
	double first_t_s, last_t_s;
	long first_line, seg_line, segment;
	size_t n, cap;
	double *t, *x, *y, *h, *sp, *yr;
	unsigned char *meas;
} robot;

typedef struct {
	char id[ID_MAX];
	long segment, first_line;
	double trim_start_s;
	int headline;
	wl_measure_result res;
} run_out;

typedef struct {
	const char *path;
	int c_t, c_id, c_x, c_y, c_h, c_sp, c_yr, c_seg, c_status;
	robot *robots;
	size_t nrobots;
	run_out *runs;
	size_t nruns, capruns;
	wl_measure_opts opt;
	long last_line;
	int skipped;
} ctx;

static void robot_release(robot *r)
{
	free(r->t);
	free(r->x);
	free(r->y);
	free(r->h);
	free(r->sp);
	free(r->yr);
	free(r->meas);
}

static wl_status robot_grow(robot *r, wl_err *err)
{
	size_t cap = r->cap ? 2 * r->cap : 1024;
	double **arr[] = {&r->t, &r->x, &r->y, &r->h, &r->sp, &r->yr};
	unsigned char *m;
	for (size_t i = 0; i < sizeof arr / sizeof arr[0]; i++) {
		double *p = realloc(*arr[i], cap * sizeof **arr[i]);
		if (!p)
			return wl_err_set(err, WL_ENOMEM, "out of memory for a segment of %zu rows", cap);
		*arr[i] = p;
	}
	m = realloc(r->meas, cap);
	if (!m)
		return wl_err_set(err, WL_ENOMEM, "out of memory for a segment of %zu rows", cap);
	r->meas = m;
	r->cap = cap;
	return WL_OK;
}

/* Measures the open segment of r and empties it.  A segment too short to
 * measure is skipped with a warning; a repeated (id, segment) is an error. */
static wl_status finish_segment(ctx *c, robot *r, wl_err *err)
{
	wl_measure_input in = {r->n, r->t, r->x, r->y, r->h, r->sp, r->yr, r->meas};
	run_out *o;
	wl_err e2;
	if (r->n == 0)
		return WL_OK;
	for (size_t i = 0; i < c->nruns; i++)
		if (strcmp(c->runs[i].id, r->id) == 0 && c->runs[i].segment == r->segment)
			return wl_err_set(err, WL_EFORMAT,
			                  "%s:%ld: segment %ld of id '%s' starts again after other rows "
			                  "(first at line %ld): "
			                  "give each segment of a robot one block of rows",
			                  c->path, r->seg_line, r->segment, r->id, c->runs[i].first_line);
	if (c->nruns == c->capruns) {
		size_t cap = c->capruns ? 2 * c->capruns : 16;
		run_out *p = realloc(c->runs, cap * sizeof *p);
		if (!p)
			return wl_err_set(err, WL_ENOMEM, "out of memory for %zu runs", cap);
		c->runs = p;
		c->capruns = cap;
	}
	o = &c->runs[c->nruns];
	memset(o, 0, sizeof *o);
	if (wl_measure_run(&in, &c->opt, &o->res, &e2) != WL_OK) {
		cli_warn("measure", "%s:%ld: id '%s' segment %ld not measured: %s", c->path, r->seg_line,
		         r->id, r->segment, e2.msg);
		c->skipped++;
	} else {
		memcpy(o->id, r->id, ID_MAX);
		o->segment = r->segment;
		o->first_line = r->seg_line;
		o->trim_start_s = r->t[0] - r->first_t_s;
		c->nruns++;
	}
	r->n = 0;
	return WL_OK;
}

static robot *find_robot(ctx *c, const char *id, wl_err *err)
{
	robot *p;
	for (size_t i = 0; i < c->nrobots; i++)
		if (strcmp(c->robots[i].id, id) == 0)
			return &c->robots[i];
	p = realloc(c->robots, (c->nrobots + 1) * sizeof *p);
	if (!p) {
		wl_err_set(err, WL_ENOMEM, "out of memory for robot '%s'", id);
		return NULL;
	}
	c->robots = p;
	p = &c->robots[c->nrobots++];
	memset(p, 0, sizeof *p);
	snprintf(p->id, ID_MAX, "%s", id);
	p->first_t_s = NAN;
	p->last_t_s = -INFINITY;
	p->segment = -1;
	return p;
}

static wl_status opt_double(const wl_csv_row *row, int col, const char *name, double *out, wl_err *err)
{
	*out = NAN;
	if (col < 0 || wl_csv_empty(row, col))
		return WL_OK;
	return wl_csv_get_double(row, col, name, out, err);
}

static wl_status header_row(ctx *c, const wl_csv_row *row, wl_err *err)
{
	static const char *const req[] = {"t_s", "id", "x_m", "y_m", "segment", "status", NULL};
	wl_status st = wl_csv_require(row, req, err);
	if (st)
		return wl_err_prefix(err, "not a CLEAN.csv (see DEVELOPERS.md)");
	c->c_t = wl_csv_col(row, "t_s");
	c->c_id = wl_csv_col(row, "id");
	c->c_x = wl_csv_col(row, "x_m");
	c->c_y = wl_csv_col(row, "y_m");
	c->c_seg = wl_csv_col(row, "segment");
	c->c_status = wl_csv_col(row, "status");
	c->c_h = wl_csv_col(row, "heading_rad");
	c->c_sp = wl_csv_col(row, "speed_mps");
	c->c_yr = wl_csv_col(row, "yaw_rate_radps");
	return WL_OK;
}

static wl_status on_row(const wl_csv_row *row, void *vctx, wl_err *err)
{
	ctx *c = vctx;
	double t, x, y, h, sp, yr;
	long seg;
	const char *id, *status;
	robot *r;
	wl_status st;
	if (row->index == 0)
		return header_row(c, row, err);
	c->last_line = row->line;
	if (wl_csv_empty(row, c->c_id))
		return wl_err_set(err, WL_EFORMAT, "%s:%ld: column 'id' is empty: give every row a robot id",
		                  row->path, row->line);
	id = row->fields[c->c_id];
	if (strlen(id) >= ID_MAX)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: id '%.20s...' is longer than %d characters: shorten it", row->path,
		                  row->line, id, ID_MAX - 1);
	if ((st = wl_csv_get_double(row, c->c_t, "t_s", &t, err)) ||
	    (st = wl_csv_get_long(row, c->c_seg, "segment", &seg, err)))
		return st;
	if (!(r = find_robot(c, id, err)))
		return WL_ENOMEM;
	if (!(t > r->last_t_s))
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: t_s %.6f of id '%s' is not after its previous row's %.6f: sort "
		                  "the rows by time",
		                  row->path, row->line, t, id, r->last_t_s);
	r->last_t_s = t;
	if (isnan(r->first_t_s))
		r->first_t_s = t;
	if (r->n > 0 && seg != r->segment && (st = finish_segment(c, r, err)))
		return st;
	if (seg < 0)
		return WL_OK;
	status = c->c_status < (int)row->nfields ? row->fields[c->c_status] : "";
	if (strcmp(status, "measured") != 0 && strcmp(status, "filled") != 0 &&
	    strcmp(status, "outlier") != 0)
		return wl_err_set(err, WL_EFORMAT,
		                  "%s:%ld: status '%s' is not measured, filled or outlier: fix the clean "
		                  "stage's output",
		                  row->path, row->line, status);
	if ((st = opt_double(row, c->c_x, "x_m", &x, err)) ||
	    (st = opt_double(row, c->c_y, "y_m", &y, err)) ||
	    (st = opt_double(row, c->c_h, "heading_rad", &h, err)) ||
	    (st = opt_double(row, c->c_sp, "speed_mps", &sp, err)) ||
	    (st = opt_double(row, c->c_yr, "yaw_rate_radps", &yr, err)))
		return st;
	if (r->n == 0) {
		r->segment = seg;
		r->seg_line = row->line;
	}
	if (r->n == r->cap && (st = robot_grow(r, err)))
		return st;
	r->t[r->n] = t, r->x[r->n] = x, r->y[r->n] = y, r->h[r->n] = h;
	r->sp[r->n] = sp, r->yr[r->n] = yr;
	r->meas[r->n] = strcmp(status, "measured") == 0;
	r->n++;
	return WL_OK;
}

static int id_cmp(const char *a, const char *b)
{
	long la, lb;
	if (wl_parse_long(a, &la) && wl_parse_long(b, &lb))
		return la < lb ? -1 : la > lb;
	return strcmp(a, b);
}

static int run_cmp(const void *pa, const void *pb)
{
	const run_out *a = pa, *b = pb;
	int c = id_cmp(a->id, b->id);
	if (c)
		return c;
	return a->segment < b->segment ? -1 : a->segment > b->segment;
}

static void mark_headlines(ctx *c)
{
	for (size_t i = 0; i < c->nruns;) {
		size_t j = i, best = i;
		for (; j < c->nruns && strcmp(c->runs[j].id, c->runs[i].id) == 0; j++)
			if (c->runs[j].res.duration_s > c->runs[best].res.duration_s)
				best = j;
		c->runs[best].headline = 1;
		i = j;
	}
}

/* ---- output ------------------------------------------------------------ */

/* One number: 10 significant digits, null when unknown. */
static void add_num(cJSON *o, const char *key, double v)
{
	char b[WL_NUMBUF];
	if (!isfinite(v))
		cJSON_AddNullToObject(o, key);
	else
		cJSON_AddRawToObject(o, key, wl_fmt_g(b, v, 10));
}

typedef struct {
	const char *key;
	size_t off; /* offset of the double in wl_measure_result */
} field;

#define F(k, m)                                                                                              \
	{                                                                                                    \
		k, offsetof(wl_measure_result, m)                                                            \
	}
static const field fields[] = {
        F("t_start_s", t_start_s),
        F("duration_s", duration_s),
        F("tracked_fraction", tracked_fraction),
        F("path_length_m", path_length_m),
        F("net_displacement_m", net_displacement_m),
        F("straightness", straightness),
        F("mean_speed_mps", mean_speed_mps),
        F("speed_sd_mps", speed_sd_mps),
        F("mean_yaw_rate_degps", mean_yaw_rate_degps),
        F("heading_drift_degps", heading_drift_degps),
        F("radius_m", radius_m),
        F("radius_body_diameters", radius_body_diameters),
        F("curvature_per_m", curvature_per_m),
        F("curvature_se_per_m", curvature_se_per_m),
        F("arc_deg", arc_deg),
        F("centre_x_m", centre_x_m),
        F("centre_y_m", centre_y_m),
        F("fit_rms_m", fit_rms_m),
        F("radius_taubin_m", radius_taubin_m),
        F("radius_kasa_m", radius_kasa_m),
        F("yaw_osc_freq_hz", yaw_osc_freq_hz),
        F("yaw_osc_amp_deg", yaw_osc_amp_deg),
        F("yaw_osc_r2", yaw_osc_r2),
        F("sway_osc_freq_hz", sway_osc_freq_hz),
        F("sway_amp_m", sway_amp_m),
};
#undef F

static double fval(const wl_measure_result *r, const field *f)
{
	return *(const double *)((const char *)r + f->off);
}

static double period_s(const wl_measure_result *r)
{
	return r->yaw_osc_freq_hz > 0 ? 1 / r->yaw_osc_freq_hz : NAN;
}

static void add_id(cJSON *o, const char *id)
{
	long v;
	if (wl_parse_long(id, &v))
		cJSON_AddNumberToObject(o, "id", (double)v);
	else
		cJSON_AddStringToObject(o, "id", id);
}

static cJSON *run_json(const run_out *ro, double commanded)
{
	const wl_measure_result *r = &ro->res;
	cJSON *o = cJSON_CreateObject(), *ci;
	char b[WL_NUMBUF];
	if (!o)
		return NULL;
	add_id(o, ro->id);
	cJSON_AddNumberToObject(o, "segment", (double)ro->segment);
	cJSON_AddBoolToObject(o, "headline", ro->headline);
	cJSON_AddBoolToObject(o, "straight", r->straight);
	add_num(o, "trim_start_s", ro->trim_start_s);
	cJSON_AddNumberToObject(o, "rows", (double)r->n_rows);
	cJSON_AddNumberToObject(o, "measured_rows", (double)r->n_measured);
	for (size_t i = 0; i < sizeof fields / sizeof fields[0]; i++)
		add_num(o, fields[i].key, fval(r, &fields[i]));
	ci = cJSON_AddArrayToObject(o, "curvature_ci95_per_m");
	for (int k = 0; ci && k < 2; k++)
		cJSON_AddItemToArray(ci,
		                     isfinite(r->curvature_ci95_per_m[k])
		                             ? cJSON_CreateRaw(wl_fmt_g(b, r->curvature_ci95_per_m[k], 10))
		                             : cJSON_CreateNull());
	cJSON_AddNumberToObject(o, "curvature_ar_order", r->ar_order);
	add_num(o, "yaw_osc_period_s", period_s(r));
	if (isfinite(commanded)) {
		add_num(o, "commanded_period_s", commanded);
		add_num(o, "period_ratio", period_s(r) / commanded);
	}
	return o;
}

/* SUMMARY.json's text (caller frees with cJSON_free), or NULL: out of memory */
static char *summary_text(const ctx *c, double commanded)
{
	cJSON *root = cJSON_CreateObject(), *prov, *runs;
	char *text;
	if (!root)
		return NULL;
	cJSON_AddStringToObject(root, "format", "wakeline summary");
	cJSON_AddNumberToObject(root, "format_version", 1);
	prov = cJSON_AddObjectToObject(root, "provenance");
	if (prov) {
		cJSON_AddStringToObject(prov, "tool", "wakeline measure");
		cJSON_AddStringToObject(prov, "tool_version", WL_VERSION);
		cJSON_AddStringToObject(prov, "tool_revision", WL_VERSION_GIT);
		cJSON_AddStringToObject(prov, "input", c->path);
		add_num(prov, "body_diameter_m", c->opt.body_diameter_m);
		add_num(prov, "commanded_period_s", commanded);
		add_num(prov, "min_arc_deg", c->opt.min_arc_deg);
	}
	runs = cJSON_AddArrayToObject(root, "runs");
	for (size_t i = 0; runs && i < c->nruns; i++) {
		cJSON *o = run_json(&c->runs[i], commanded);
		if (!o) {
			cJSON_Delete(root);
			return NULL;
		}
		cJSON_AddItemToArray(runs, o);
	}
	text = cJSON_Print(root);
	cJSON_Delete(root);
	return text;
}

static void write_csv(const ctx *c, FILE *fp, double commanded)
{
	wl_csv_writer w;
	wl_csvw_init(&w, fp);
	wl_csvw_str(&w, "id");
	wl_csvw_str(&w, "segment");
	wl_csvw_str(&w, "headline");
	wl_csvw_str(&w, "straight");
	wl_csvw_str(&w, "trim_start_s");
	wl_csvw_str(&w, "rows");
	wl_csvw_str(&w, "measured_rows");
	for (size_t i = 0; i < sizeof fields / sizeof fields[0]; i++)
		wl_csvw_str(&w, fields[i].key);
	wl_csvw_str(&w, "curvature_ci95_low_per_m");
	wl_csvw_str(&w, "curvature_ci95_high_per_m");
	wl_csvw_str(&w, "curvature_ar_order");
	wl_csvw_str(&w, "yaw_osc_period_s");
	wl_csvw_str(&w, "commanded_period_s");
	wl_csvw_str(&w, "period_ratio");
	wl_csvw_end(&w);
	for (size_t k = 0; k < c->nruns; k++) {
		const run_out *ro = &c->runs[k];
		const wl_measure_result *r = &ro->res;
		wl_csvw_str(&w, ro->id);
		wl_csvw_int(&w, ro->segment);
		wl_csvw_int(&w, ro->headline);
		wl_csvw_int(&w, r->straight);
		wl_csvw_g(&w, ro->trim_start_s, 10);
		wl_csvw_int(&w, (long long)r->n_rows);
		wl_csvw_int(&w, (long long)r->n_measured);
		for (size_t i = 0; i < sizeof fields / sizeof fields[0]; i++) {
			double v = fval(r, &fields[i]);
			wl_csvw_g(&w, isfinite(v) ? v : NAN, 10);
		}
		wl_csvw_g(&w, r->curvature_ci95_per_m[0], 10);
		wl_csvw_g(&w, r->curvature_ci95_per_m[1], 10);
		wl_csvw_int(&w, r->ar_order);
		wl_csvw_g(&w, period_s(r), 10);
		wl_csvw_g(&w, commanded, 10);
		wl_csvw_g(&w, period_s(r) / commanded, 10);
		wl_csvw_end(&w);
	}
}

/* Writes the table (when asked) and SUMMARY.json.  Both temporaries are
 * written before either is committed, the table first: a failure leaves the
 * previous outputs as they were, and SUMMARY.json exists only when the table
 * was written too. */
static wl_status write_outputs(const ctx *c, const char *csv, const char *out, double commanded, wl_err *err)
{
	wl_afile *fc = NULL, *fj = NULL;
	char *text = summary_text(c, commanded);
	wl_status st;
	if (!text)
		return wl_err_set(err, WL_ENOMEM, "out of memory writing '%s'", out);
	if ((csv && (st = wl_afile_open(csv, &fc, err))) || (st = wl_afile_open(out, &fj, err)))
		goto done;
	if (fc)
		write_csv(c, wl_afile_fp(fc), commanded);
	fputs(text, wl_afile_fp(fj));
	fputc('\n', wl_afile_fp(fj));
	st = wl_afile_commit(fc, err);
	fc = NULL;
	if (st)
		goto done;
	st = wl_afile_commit(fj, err);
	fj = NULL;
done:
	wl_afile_abort(fc);
	wl_afile_abort(fj);
	cJSON_free(text);
	return st;
}

static void print_headline(const run_out *ro)
{
	const wl_measure_result *r = &ro->res;
	char a[WL_NUMBUF], b[WL_NUMBUF], c[WL_NUMBUF], d[WL_NUMBUF], e[WL_NUMBUF];
	printf("id %s segment %ld (%s s): ", ro->id, ro->segment, wl_fmt_fixed(a, r->duration_s, 1));
	if (r->straight)
		printf("straight (curvature %s /m, 95%% [%s, %s])", wl_fmt_fixed(a, r->curvature_per_m, 4),
		       wl_fmt_fixed(b, r->curvature_ci95_per_m[0], 4),
		       wl_fmt_fixed(c, r->curvature_ci95_per_m[1], 4));
	else
		printf("radius %s m %s (curvature %s /m, 95%% [%s, %s], arc %s deg)",
		       wl_fmt_fixed(a, r->radius_m, 3), r->radius_m > 0 ? "counter-clockwise" : "clockwise",
		       wl_fmt_fixed(b, r->curvature_per_m, 4), wl_fmt_fixed(c, r->curvature_ci95_per_m[0], 4),
		       wl_fmt_fixed(d, r->curvature_ci95_per_m[1], 4), wl_fmt_fixed(e, r->arc_deg, 0));
	printf(", speed %s m/s", wl_fmt_fixed(a, r->mean_speed_mps, 3));
	if (isfinite(r->yaw_osc_freq_hz))
		printf(", yaw %s deg at %s Hz", wl_fmt_fixed(a, r->yaw_osc_amp_deg, 1),
		       wl_fmt_fixed(b, r->yaw_osc_freq_hz, 2));
	if (isfinite(r->sway_amp_m))
		printf(", sway %s mm", wl_fmt_fixed(a, 1000 * r->sway_amp_m, 1));
	printf(", tracked %s%%\n", wl_fmt_fixed(a, 100 * r->tracked_fraction, 0));
}

static int positive_option(const char *name, const char *arg, double *out)
{
	if (!cli_parse_double(arg, out) || !(*out > 0) || !isfinite(*out))
		return cli_usage_error("measure", "%s '%s' is not a positive number", name, arg);
	return 0;
}

int cmd_measure(int argc, char **argv)
{
	static const struct option longopts[] = {
	        {"output", required_argument, NULL, 'o'},
	        {"csv", required_argument, NULL, 'c'},
	        {"body-diameter-m", required_argument, NULL, 'b'},
	        {"commanded-period-s", required_argument, NULL, 'p'},
	        {"min-arc-deg", required_argument, NULL, 'a'},
	        {"quiet", no_argument, NULL, 'q'},
	        {"help", no_argument, NULL, 'h'},
	        {NULL, 0, NULL, 0},
	};
	const char *out = NULL, *csv = NULL;
	double commanded = NAN;
	int quiet = 0, opt, rc = WL_EXIT_OK;
	ctx c;
	wl_err err;
	memset(&c, 0, sizeof c);
	wl_measure_opts_init(&c.opt);
	optind = 1;
	opterr = 0;
	while ((opt = getopt_long(argc, argv, ":o:qh", longopts, NULL)) != -1) {
		switch (opt) {
		case 'o':
			out = optarg;
			break;
		case 'c':
			csv = optarg;
			break;
		case 'b':
			if (positive_option("--body-diameter-m", optarg, &c.opt.body_diameter_m))
				return WL_EXIT_USAGE;
			break;
		case 'p':
			if (positive_option("--commanded-period-s", optarg, &commanded))
				return WL_EXIT_USAGE;
			break;
		case 'a':
			if (positive_option("--min-arc-deg", optarg, &c.opt.min_arc_deg))
				return WL_EXIT_USAGE;
			break;
		case 'q':
			quiet = 1;
			break;
		case 'h':
			fputs(usage_text, stdout);
			return cli_finish("measure", WL_EXIT_OK);
		case ':':
			return cli_usage_error("measure", "option '%s' needs a value", argv[optind - 1]);
		default:
			return cli_usage_error("measure", "unknown option '%s'", argv[optind - 1]);
		}
	}
	if (optind != argc - 1)
		return cli_usage_error("measure", optind >= argc ? "give the CLEAN.csv to measure"
		                                                 : "give exactly one CLEAN.csv");
	if (!out)
		return cli_usage_error("measure", "give the output file with -o SUMMARY.json");
	c.path = argv[optind];
	c.c_t = -1;
	if (wl_csv_read(c.path, on_row, &c, &err) != WL_OK) {
		rc = cli_fail("measure", &err);
		goto done;
	}
	if (c.c_t < 0) {
		wl_err_set(&err, WL_EFORMAT, "%s: the file is empty: give a CLEAN.csv with a header", c.path);
		rc = cli_fail("measure", &err);
		goto done;
	}
	for (size_t i = 0; i < c.nrobots; i++)
		if (finish_segment(&c, &c.robots[i], &err) != WL_OK) {
			rc = cli_fail("measure", &err);
			goto done;
		}
	if (c.nruns == 0) {
		wl_err_set(&err, WL_EFORMAT,
		           "%s: no segment could be measured (%d skipped): check the clean stage's segments",
		           c.path, c.skipped);
		rc = cli_fail("measure", &err);
		goto done;
	}
	qsort(c.runs, c.nruns, sizeof *c.runs, run_cmp);
	mark_headlines(&c);
	if (write_outputs(&c, csv, out, commanded, &err) != WL_OK) {
		rc = cli_fail("measure", &err);
		goto done;
	}
	if (!quiet)
		for (size_t i = 0; i < c.nruns; i++)
			if (c.runs[i].headline)
				print_headline(&c.runs[i]);
	rc = cli_finish("measure", WL_EXIT_OK);
done:
	for (size_t i = 0; i < c.nrobots; i++)
		robot_release(&c.robots[i]);
	free(c.robots);
	free(c.runs);
	return rc;
}
