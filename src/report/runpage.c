/*
 * runpage.c: run.html, the page of one clip folder (a section per run:
 * robot x segment), one self-contained file drawn by
 * src/report/assets/run.js from the data embedded here: the path on the
 * tank with the fitted circle, heading, yaw rate and speed over time with
 * the rows left out shaded, the yaw spectrum with its fitted peak, the
 * circle's residuals, the key numbers rounded by core/numfmt's rule, the
 * uncertainty budget and verdict when the summary has them, the clean
 * stage's account (trim, gaps, outliers), the clip's process.log and the
 * tracker's trail image (embedded).
 *
 * Inputs are the files of the folder: clean.csv (read here through
 * core/csvio, columns as in DEVELOPERS.md), summary.json, and when present
 * clean.json, clip.json (clip name and parameters, written by batch),
 * process.log and trail.png.  The spectrum and residuals are recomputed
 * from clean.csv by the measure module's own functions
 * (wl_measure_run_series, wl_measure_periodogram), so they are those the
 * summary's numbers come from.
 *
 * Memory: every row of the clip is held while the page is made (about 60
 * bytes a row); the page holds at most RP_MAX_POINTS points a robot.
 */
#define _POSIX_C_SOURCE 200809L
#include "report/report.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "core/afile.h"
#include "core/angle.h"
#include "core/csvio.h"
#include "core/jsonio.h"
#include "core/numfmt.h"
#include "measure/measure.h"
#include "report/readers.h"
#include "report/page.h"
#include "wl_version.h"

#define RP_MAX_IDS 64
#define RP_MAX_POINTS 4000     /* per robot, for the time plots and the map */
#define RP_MAX_BINS 1200       /* spectrum points */
#define RP_MAX_LOG_LINES 400   /* process.log lines shown */
#define RP_MAX_TRAIL (8 << 20) /* bytes of trail.png embedded */

typedef struct {
	char id[64];
	size_t n, cap;
	double *t, *x, *y, *h, *v, *yr;
	int *seg;
	unsigned char *meas;
} rtrack;

typedef struct {
	const char *path;
	wl_clean_cols c;
	rtrack *tr;
	size_t ntr;
} rreader;

static void rtrack_free(rtrack *t)
{
	free(t->t);
	free(t->x);
	free(t->y);
	free(t->h);
	free(t->v);
	free(t->yr);
	free(t->seg);
	free(t->meas);
}

static int rtrack_grow(rtrack *t)
{
	size_t nc = t->cap ? 2 * t->cap : 1024;
	double **d[] = {&t->t, &t->x, &t->y, &t->h, &t->v, &t->yr};
	for (size_t k = 0; k < sizeof d / sizeof d[0]; k++) {
		double *p = realloc(*d[k], nc * sizeof *p);
		if (!p)
			return 0;
		*d[k] = p;
	}
	{
		int *p = realloc(t->seg, nc * sizeof *p);
		unsigned char *q;
		if (!p)
			return 0;
		t->seg = p;
		q = realloc(t->meas, nc);
		if (!q)
			return 0;
		t->meas = q;
	}
	t->cap = nc;
	return 1;
}

static double cellv(const wl_csv_row *row, int col)
{
	double v;
	if (col < 0 || wl_csv_empty(row, col) || !wl_parse_double(row->fields[col], &v))
		return NAN;
	return v;
}

static wl_status on_row(const wl_csv_row *row, void *ctx, wl_err *err)
{
	static const char *const req[] = {"t_s", "id", "x_m", "y_m", "segment", NULL};
	rreader *r = ctx;
	rtrack *tr = NULL;
	long seg = -1;
	double t;
	size_t i;
	const char *id;
	if (row->index == 0)
		return wl_clean_cols_read(row, req, &r->c, err);
	if (!(id = wl_clean_cols_id(row, &r->c, err)))
		return err->code;
	for (i = 0; i < r->ntr; i++)
		if (strcmp(r->tr[i].id, id) == 0)
			tr = &r->tr[i];
	if (!tr) {
		if (r->ntr == RP_MAX_IDS)
			return wl_err_set(err, WL_ELIMIT,
			                  "%s:%ld: more than %d robot ids: the run page shows at most %d",
			                  row->path, row->line, RP_MAX_IDS, RP_MAX_IDS);
		tr = &r->tr[r->ntr++];
		snprintf(tr->id, sizeof tr->id, "%s", id);
	}
	if (wl_csv_get_double(row, r->c.t, "t_s", &t, err))
		return err->code;
	if (!wl_csv_empty(row, r->c.seg) && wl_csv_get_long(row, r->c.seg, "segment", &seg, err))
		return err->code;
	if (tr->n == tr->cap && !rtrack_grow(tr))
		return wl_err_set(err, WL_ENOMEM, "%s: out of memory at line %ld", row->path, row->line);
	tr->t[tr->n] = t;
	tr->x[tr->n] = cellv(row, r->c.x);
	tr->y[tr->n] = cellv(row, r->c.y);
	tr->h[tr->n] = cellv(row, r->c.h);
	tr->v[tr->n] = cellv(row, r->c.v);
	tr->yr[tr->n] = cellv(row, r->c.yr);
	tr->seg[tr->n] = (int)seg;
	tr->meas[tr->n] =
	        r->c.st < 0 || ((size_t)r->c.st < row->nfields && !strcmp(row->fields[r->c.st], "measured"));
	tr->n++;
	return WL_OK;
}

/* ---- JSON helpers --------------------------------------------------------- */

/* Adds v[i] (every stride-th of idx, or all) rounded to `quantum`, NaN as null. */
static cJSON *add_array(cJSON *obj, const char *key, const double *v, const size_t *idx, size_t n,
                        double scale, double quantum)
{
	cJSON *a = cJSON_AddArrayToObject(obj, key);
	for (size_t i = 0; a && i < n; i++) {
		double x = v[idx ? idx[i] : i] * scale;
		cJSON_AddItemToArray(a, isfinite(x) ? cJSON_CreateNumber(round(x / quantum) * quantum)
		                                    : cJSON_CreateNull());
	}
	return a;
}

/* ---- the robots' series: thinned, heading unwrapped ---------------------- */

static wl_status add_robot(cJSON *robots, const rtrack *tr, wl_err *err)
{
	size_t stride = (tr->n + RP_MAX_POINTS - 1) / RP_MAX_POINTS, m = 0, i;
	size_t *idx = malloc((tr->n / (stride ? stride : 1) + tr->n / 8 + 8) * sizeof *idx);
	double *hd = malloc((tr->n + 1) * sizeof *hd), prev = NAN, off = 0;
	cJSON *o = cJSON_CreateObject(), *seg;
	if (!idx || !hd || !o) {
		free(idx);
		free(hd);
		cJSON_Delete(o);
		return wl_err_set(err, WL_ENOMEM, "out of memory for the run page");
	}
	if (stride < 1)
		stride = 1;
	for (i = 0; i < tr->n; i++) { /* unwrap on every row, before thinning */
		double h = tr->h[i];
		if (isfinite(h)) {
			if (isfinite(prev))
				off += wl_wrap_pi(h + off - prev) - (h + off - prev);
			hd[i] = (h + off) / WL_DEG;
			prev = h + off;
		} else {
			hd[i] = NAN;
		}
	}
	/* every stride-th row and the rows where the segment changes, within a budget */
	for (i = 0; i < tr->n; i++)
		if ((i % stride == 0 || (i > 0 && tr->seg[i] != tr->seg[i - 1]) || i + 1 == tr->n) &&
		    m < tr->n / stride + tr->n / 8 + 8)
			idx[m++] = i;
	cJSON_AddStringToObject(o, "id", tr->id);
	add_array(o, "t", tr->t, idx, m, 1, 1e-4);
	add_array(o, "x", tr->x, idx, m, 1, 1e-5);
	add_array(o, "y", tr->y, idx, m, 1, 1e-5);
	add_array(o, "h", hd, idx, m, 1, 1e-3);
	add_array(o, "yr", tr->yr, idx, m, 1 / WL_DEG, 1e-3);
	add_array(o, "v", tr->v, idx, m, 1, 1e-5);
	seg = cJSON_AddArrayToObject(o, "seg");
	for (i = 0; seg && i < m; i++)
		cJSON_AddItemToArray(seg, cJSON_CreateNumber(tr->seg[idx[i]]));
	cJSON_AddItemToArray(robots, o);
	free(idx);
	free(hd);
	return WL_OK;
}

/* ---- one run: its numbers, spectrum and residuals ------------------------ */

typedef struct {
	const char *label, *key;
	double scale;
	int fixed; /* >= 0: that many decimals, no interval */
} number_row;

static const number_row NUMBERS[] = {
        {"radius (m), + counter-clockwise", "radius_m", 1, -1},
        {"curvature (1/m)", "curvature_per_m", 1, -1},
        {"arc swept (\xc2\xb0)", "arc_deg", 1, 0},
        {"straightness", "straightness", 1, -1},
        {"path length (m)", "path_length_m", 1, -1},
        {"mean speed (m/s)", "mean_speed_mps", 1, -1},
        {"speed sd (m/s)", "speed_sd_mps", 1, -1},
        {"mean yaw rate (\xc2\xb0/s)", "mean_yaw_rate_degps", 1, -1},
        {"yaw oscillation (Hz)", "yaw_osc_freq_hz", 1, -1},
        {"yaw oscillation amplitude (\xc2\xb0)", "yaw_osc_amp_deg", 1, -1},
        {"share of yaw variance in that sine", "yaw_osc_r2", 1, 2},
        {"sway amplitude (mm)", "sway_amp_m", 1000, -1},
        {"circle fit RMS (mm)", "fit_rms_m", 1000, -1},
        {"duration analysed (s)", "duration_s", 1, 2},
        {"start trimmed (s)", "trim_start_s", 1, 2},
        {"tracked (%)", "tracked_fraction", 100, 1},
};

/* The key numbers for people: value ± half its 95% interval where one is
 * known (the curvature's; the radius's from it; the budget's total
 * standard error x 1.96 for the others), else 3 significant digits. */
static void add_numbers(cJSON *o, const cJSON *run)
{
	cJSON *a = cJSON_AddArrayToObject(o, "numbers");
	const cJSON *ci = cJSON_GetObjectItemCaseSensitive(run, "curvature_ci95_per_m");
	const cJSON *budget = cJSON_GetObjectItemCaseSensitive(run, "budget");
	double lo = NAN, hi = NAN;
	if (cJSON_GetArraySize(ci) == 2) {
		lo = cJSON_IsNumber(cJSON_GetArrayItem(ci, 0)) ? cJSON_GetArrayItem(ci, 0)->valuedouble : NAN;
		hi = cJSON_IsNumber(cJSON_GetArrayItem(ci, 1)) ? cJSON_GetArrayItem(ci, 1)->valuedouble : NAN;
	}
	for (size_t i = 0; a && i < sizeof NUMBERS / sizeof NUMBERS[0]; i++) {
		const number_row *nr = &NUMBERS[i];
		double v = wl_summary_num(run, nr->key), half = NAN;
		const cJSON *b = cJSON_GetObjectItemCaseSensitive(budget, nr->key);
		char text[WL_NUMFMT_BUF], full[WL_NUMFMT_BUF];
		cJSON *row;
		if (!strcmp(nr->key, "radius_m") &&
		    cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(run, "straight")))
			snprintf(text, sizeof text, "straight");
		else if (!isfinite(v))
			snprintf(text, sizeof text, "n/a");
		else {
			if (!strcmp(nr->key, "curvature_per_m"))
				half = 0.5 * (hi - lo);
			else if (!strcmp(nr->key, "radius_m") && lo * hi > 0)
				half = 0.5 * fabs(1 / lo - 1 / hi);
			else if (isfinite(wl_summary_num(b, "total_se")))
				half = 1.959964 * wl_summary_num(b, "total_se");
			if (nr->fixed >= 0)
				wl_numfmt_fixed(text, v * nr->scale, nr->fixed);
			else
				wl_numfmt_pm(text, v * nr->scale, half * nr->scale);
		}
		row = cJSON_CreateArray();
		cJSON_AddItemToArray(row, cJSON_CreateString(nr->label));
		cJSON_AddItemToArray(row, cJSON_CreateString(text));
		cJSON_AddItemToArray(row, cJSON_CreateString(isfinite(v) ? wl_numfmt_exact(full, v) : ""));
		cJSON_AddItemToArray(a, row);
	}
}

/* The rows of run (id, segment) of track tr as a measure input. */
typedef struct {
	double *t, *x, *y, *h, *v, *yr;
	unsigned char *meas;
	size_t n;
} segrows;

static void segrows_free(segrows *s)
{
	free(s->t);
	free(s->meas);
	memset(s, 0, sizeof *s);
}

static int segrows_take(const rtrack *tr, int segment, segrows *s)
{
	size_t i, n = 0;
	memset(s, 0, sizeof *s);
	for (i = 0; i < tr->n; i++)
		n += tr->seg[i] == segment;
	s->t = malloc((6 * n + 1) * sizeof *s->t);
	s->meas = malloc(n + 1);
	if (!s->t || !s->meas) {
		segrows_free(s);
		return 0;
	}
	s->x = s->t + n, s->y = s->x + n, s->h = s->y + n, s->v = s->h + n, s->yr = s->v + n;
	for (i = 0; i < tr->n; i++)
		if (tr->seg[i] == segment) {
			s->t[s->n] = tr->t[i], s->x[s->n] = tr->x[i], s->y[s->n] = tr->y[i];
			s->h[s->n] = tr->h[i], s->v[s->n] = tr->v[i], s->yr[s->n] = tr->yr[i];
			s->meas[s->n++] = tr->meas[i];
		}
	return 1;
}

/* Spectrum of the yaw about the path and the circle's residuals. */
static wl_status add_analysis(cJSON *o, const rtrack *tr, int segment, double min_arc_deg, wl_err *err)
{
	segrows s;
	wl_measure_input in;
	wl_measure_opts opt;
	wl_measure_result res;
	double *yaw = NULL, *off = NULL, *f = NULL, *p = NULL;
	size_t nb = 0, i;
	wl_status st = WL_OK;
	if (!segrows_take(tr, segment, &s))
		return wl_err_set(err, WL_ENOMEM, "out of memory for the run page");
	if (s.n < 16)
		goto out; /* too short to analyse: the page says so */
	in.n = s.n, in.t_s = s.t, in.x_m = s.x, in.y_m = s.y, in.heading_rad = s.h;
	in.speed_mps = s.v, in.yaw_rate_radps = s.yr, in.measured = s.meas;
	wl_measure_opts_init(&opt);
	if (isfinite(min_arc_deg))
		opt.min_arc_deg = min_arc_deg;
	yaw = malloc(s.n * sizeof *yaw);
	off = malloc(s.n * sizeof *off);
	f = malloc((s.n + 2) * sizeof *f);
	p = malloc((s.n + 2) * sizeof *p);
	if (!yaw || !off || !f || !p) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory for the run page");
		goto out;
	}
	if (wl_measure_run_series(&in, &opt, &res, yaw, off, NULL) != WL_OK)
		goto out;
	/* residuals of the circle (or line), mm, thinned */
	{
		size_t stride = (s.n + 2999) / 3000, m = 0,
		       *idx = malloc((s.n / (stride ? stride : 1) + 2) * sizeof *idx);
		cJSON *r = cJSON_AddObjectToObject(o, "resid");
		if (!idx) {
			st = wl_err_set(err, WL_ENOMEM, "out of memory for the run page");
			goto out;
		}
		for (i = 0; i < s.n; i += stride ? stride : 1)
			idx[m++] = i;
		add_array(r, "t", s.t, idx, m, 1, 1e-4);
		add_array(r, "mm", off, idx, m, 1000, 1e-4);
		free(idx);
	}
	/* the periodogram of the yaw about the path, max-pooled to RP_MAX_BINS */
	if (wl_measure_periodogram(s.t, yaw, s.n, f, p, s.n + 2, &nb, NULL) == WL_OK && nb > 0) {
		size_t pool = (nb + RP_MAX_BINS - 1) / RP_MAX_BINS, m = 0;
		double pmax = 0, T = s.t[s.n - 1] - s.t[0];
		cJSON *sp = cJSON_AddObjectToObject(o, "spectrum"), *af = cJSON_AddArrayToObject(sp, "f"),
		      *ap = cJSON_AddArrayToObject(sp, "p");
		for (i = 0; i < nb; i++)
			pmax = fmax(pmax, p[i]);
		for (i = 0; i < nb; i += pool) {
			size_t j, best = i;
			for (j = i; j < i + pool && j < nb; j++)
				if (p[j] > p[best])
					best = j;
			cJSON_AddItemToArray(af, cJSON_CreateNumber(round(f[best] * 1e5) / 1e5));
			cJSON_AddItemToArray(
			        ap, cJSON_CreateNumber(pmax > 0 ? round(p[best] / pmax * 1e6) / 1e6 : 0));
			m++;
		}
		/* the band the measure searched (measure.h: 3 cycles, 0.8 x Nyquist) */
		cJSON_AddNumberToObject(sp, "f_lo", fmax(3 / T, 0.05));
		cJSON_AddNumberToObject(sp, "f_hi", 0.8 * 0.5 * (double)(res.n_used - 1) / T);
		cJSON_AddNumberToObject(sp, "peak_hz", res.yaw_osc_freq_hz);
		(void)m;
	}
out:
	free(yaw);
	free(off);
	free(f);
	free(p);
	segrows_free(&s);
	return st;
}

/* ---- the other files of the folder --------------------------------------- */

static void add_log(cJSON *root, const char *dir)
{
	char path[4200], *text = NULL, *line, *save = NULL;
	size_t len, n = 0;
	cJSON *a;
	snprintf(path, sizeof path, "%s/process.log", dir);
	if (wl_read_file(path, 1 << 20, &text, &len, NULL) != WL_OK)
		return;
	a = cJSON_AddArrayToObject(root, "log");
	for (line = strtok_r(text, "\n", &save); a && line && n < RP_MAX_LOG_LINES;
	     line = strtok_r(NULL, "\n", &save), n++) {
		if (strlen(line) > 400)
			line[400] = '\0';
		cJSON_AddItemToArray(a, cJSON_CreateString(line));
	}
	free(text);
}

static void add_trail(cJSON *root, const char *dir)
{
	static const char B64[] = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
	char path[4200], *data = NULL, *out, *q;
	size_t len, i;
	snprintf(path, sizeof path, "%s/trail.png", dir);
	if (wl_read_file(path, RP_MAX_TRAIL, &data, &len, NULL) != WL_OK)
		return;
	out = malloc(32 + 4 * (len / 3 + 1) + 1);
	if (out) {
		q = out + sprintf(out, "data:image/png;base64,");
		for (i = 0; i + 2 < len; i += 3) {
			unsigned v = (unsigned char)data[i] << 16 | (unsigned char)data[i + 1] << 8 |
			             (unsigned char)data[i + 2];
			*q++ = B64[v >> 18], *q++ = B64[v >> 12 & 63], *q++ = B64[v >> 6 & 63],
			*q++ = B64[v & 63];
		}
		if (len - i == 1) {
			unsigned v = (unsigned char)data[i] << 16;
			*q++ = B64[v >> 18], *q++ = B64[v >> 12 & 63], *q++ = '=', *q++ = '=';
		} else if (len - i == 2) {
			unsigned v = (unsigned char)data[i] << 16 | (unsigned char)data[i + 1] << 8;
			*q++ = B64[v >> 18], *q++ = B64[v >> 12 & 63], *q++ = B64[v >> 6 & 63], *q++ = '=';
		}
		*q = '\0';
		cJSON_AddStringToObject(root, "trail", out);
		free(out);
	}
	free(data);
}

/* The scene: the one given, else the tank outline clean.json recorded. */
static void add_scene(cJSON *root, const wl_report_scene *sc, const cJSON *clean)
{
	cJSON *o = cJSON_AddObjectToObject(root, "scene"), *a, *m;
	size_t i;
	if (!o)
		return;
	a = cJSON_AddArrayToObject(o, "outline");
	if (sc && sc->n_outline >= 2) {
		for (i = 0; i < sc->n_outline; i++) {
			cJSON *p = cJSON_CreateArray();
			cJSON_AddItemToArray(p, cJSON_CreateNumber(sc->outline_m[i][0]));
			cJSON_AddItemToArray(p, cJSON_CreateNumber(sc->outline_m[i][1]));
			cJSON_AddItemToArray(a, p);
		}
	} else {
		const cJSON *cal = cJSON_GetObjectItemCaseSensitive(clean, "calibration");
		const cJSON *ol = cJSON_GetObjectItemCaseSensitive(cal, "tank_outline_m");
		if (cJSON_IsArray(ol))
			cJSON_ReplaceItemInObjectCaseSensitive(o, "outline", cJSON_Duplicate(ol, 1));
	}
	m = cJSON_AddArrayToObject(o, "markers");
	for (i = 0; sc && m && i < sc->n_markers; i++) {
		cJSON *p = cJSON_CreateArray();
		cJSON_AddItemToArray(p, cJSON_CreateNumber(sc->markers_m[i][0]));
		cJSON_AddItemToArray(p, cJSON_CreateNumber(sc->markers_m[i][1]));
		cJSON_AddItemToArray(
		        p, cJSON_CreateString(sc->marker_ids && sc->marker_ids[i] ? sc->marker_ids[i] : ""));
		cJSON_AddItemToArray(m, p);
	}
	if (sc && sc->body_diameter_m > 0)
		cJSON_AddNumberToObject(o, "body_m", sc->body_diameter_m);
}

/* clean.json's account of each robot: trim, end, gaps (at most 50), counts. */
static void add_clean(cJSON *root, const cJSON *clean)
{
	const cJSON *robots = cJSON_GetObjectItemCaseSensitive(clean, "robots"), *r;
	cJSON *a = cJSON_AddArrayToObject(root, "clean");
	static const char *const keep[] = {"id",           "still",    "rows_in",  "rows_out",
	                                   "rows_dropped", "measured", "filled",   "outliers",
	                                   "trim",         "end",      "segments", NULL};
	cJSON_ArrayForEach(r, robots)
	{
		cJSON *o = cJSON_CreateObject(), *g;
		const cJSON *gaps = cJSON_GetObjectItemCaseSensitive(r, "gaps"), *e;
		int n = 0;
		for (size_t k = 0; keep[k]; k++) {
			const cJSON *v = cJSON_GetObjectItemCaseSensitive(r, keep[k]);
			if (v)
				cJSON_AddItemToObject(o, keep[k], cJSON_Duplicate(v, 1));
		}
		g = cJSON_AddArrayToObject(o, "gaps");
		cJSON_ArrayForEach(e, gaps) if (n++ < 50) cJSON_AddItemToArray(g, cJSON_Duplicate(e, 1));
		cJSON_AddNumberToObject(o, "gap_count", cJSON_GetArraySize(gaps));
		cJSON_AddItemToArray(a, o);
	}
}

/* ---- the page ------------------------------------------------------------- */

static wl_status build(const char *dir, const wl_report_scene *scene, cJSON *root, char *title, size_t tcap,
                       wl_err *err)
{
	char path[4200], idt[64];
	cJSON *sum = NULL, *clean = NULL, *clip = NULL, *runs_out, *robots;
	const cJSON *runs, *run, *params;
	rreader rd;
	size_t i;
	wl_status s = WL_OK;
	double min_arc;

	memset(&rd, 0, sizeof rd);
	snprintf(path, sizeof path, "%s/summary.json", dir);
	if ((s = wl_json_load(path, &sum, err)))
		return s;
	runs = cJSON_GetObjectItemCaseSensitive(sum, "runs");
	if (!cJSON_IsArray(runs)) {
		s = wl_err_set(err, WL_EFORMAT,
		               "%s: no \"runs\" array: is this a summary.json of the measure stage?", path);
		goto out;
	}
	min_arc = wl_summary_num(cJSON_GetObjectItemCaseSensitive(sum, "provenance"), "min_arc_deg");
	snprintf(path, sizeof path, "%s/clean.json", dir);
	wl_json_load(path, &clean, NULL);
	snprintf(path, sizeof path, "%s/clip.json", dir);
	wl_json_load(path, &clip, NULL);
	{
		const char *slash = strrchr(dir, '/');
		const char *name = wl_json_string_or(clip, "clip", slash && slash[1] ? slash + 1 : dir);
		snprintf(title, tcap, "%s", name);
		cJSON_AddStringToObject(root, "clip", name);
	}
	params = cJSON_GetObjectItemCaseSensitive(clip, "params");
	cJSON_AddItemToObject(root, "params", params ? cJSON_Duplicate(params, 1) : cJSON_CreateObject());
	cJSON_AddStringToObject(root, "tool", "wakeline " WL_VERSION);
	add_scene(root, scene, clean);
	add_clean(root, clean);
	add_log(root, dir);
	add_trail(root, dir);
	{
		static const char *const files[] = {"raw.csv",      "clean.csv",   "clean.json",
		                                    "summary.json", "process.log", "path_m.svg",
		                                    "heading.svg",  "trail.png",   NULL};
		cJSON *a = cJSON_AddArrayToObject(root, "files");
		struct stat st;
		for (i = 0; files[i]; i++) {
			snprintf(path, sizeof path, "%s/%s", dir, files[i]);
			if (stat(path, &st) == 0)
				cJSON_AddItemToArray(a, cJSON_CreateString(files[i]));
		}
	}
	/* clean.csv: the robots' rows (a folder without it still gets its numbers) */
	rd.tr = calloc(RP_MAX_IDS, sizeof *rd.tr);
	if (!rd.tr) {
		s = wl_err_set(err, WL_ENOMEM, "out of memory for the run page of '%s'", dir);
		goto out;
	}
	snprintf(path, sizeof path, "%s/clean.csv", dir);
	rd.path = path;
	{
		struct stat st;
		if (stat(path, &st) == 0 && (s = wl_csv_read(path, on_row, &rd, err)))
			goto out;
	}
	robots = cJSON_AddArrayToObject(root, "robots");
	for (i = 0; i < rd.ntr; i++)
		if ((s = add_robot(robots, &rd.tr[i], err)))
			goto out;
	runs_out = cJSON_AddArrayToObject(root, "runs");
	cJSON_ArrayForEach(run, runs)
	{
		cJSON *o = cJSON_CreateObject();
		const rtrack *tr = NULL;
		double seg = wl_summary_num(run, "segment");
		cJSON_AddItemToArray(runs_out, o);
		wl_summary_id_text(cJSON_GetObjectItemCaseSensitive(run, "id"), idt, sizeof idt);
		cJSON_AddStringToObject(o, "id", idt);
		cJSON_AddNumberToObject(o, "segment", isfinite(seg) ? seg : -1);
		cJSON_AddItemToObject(o, "summary", cJSON_Duplicate(run, 1));
		add_numbers(o, run);
		for (i = 0; i < rd.ntr; i++)
			if (strcmp(rd.tr[i].id, idt) == 0)
				tr = &rd.tr[i];
		if (tr && isfinite(seg) && (s = add_analysis(o, tr, (int)seg, min_arc, err)))
			goto out;
	}
out:
	for (i = 0; rd.tr && i < rd.ntr; i++)
		rtrack_free(&rd.tr[i]);
	free(rd.tr);
	cJSON_Delete(sum);
	cJSON_Delete(clean);
	cJSON_Delete(clip);
	return s;
}

static const char BODY[] =
        "<p class=\"note\"><a href=\"../../report.html\">&#8592; the sweep's report</a> (when this "
        "folder is part of a batch)</p>\n"
        "<div id=\"head\"></div>\n<nav class=\"runs\" id=\"runnav\"></nav>\n<div id=\"runs\"></div>\n"
        "<h2 id=\"clean-h\">What the clean stage did</h2>\n<div id=\"clean\"></div>\n"
        "<h2 id=\"log-h\">Messages</h2>\n<div id=\"log\"></div>\n"
        "<h2 id=\"trail-h\">Trail (the tracker's quality-control image)</h2>\n<div id=\"trail\"></div>\n"
        "<noscript><p><strong>This page draws its plots with JavaScript, which is off.</strong> The "
        "numbers are in summary.json beside it.</p></noscript>\n";

wl_status wl_report_run_page(const char *clip_dir, const wl_report_scene *scene, wl_err *err)
{
	char path[4200], title[512];
	cJSON *root = cJSON_CreateObject();
	wl_afile *af = NULL;
	FILE *fp;
	wl_status s;
	if (!root)
		return wl_err_set(err, WL_ENOMEM, "out of memory for the run page of '%s'", clip_dir);
	if ((s = build(clip_dir, scene, root, title, sizeof title, err)))
		goto out;
	snprintf(path, sizeof path, "%s/run.html", clip_dir);
	if ((s = wl_afile_open(path, &af, err)))
		goto out;
	fp = wl_afile_fp(af);
	wl_page_head(fp, title);
	fputs("<h1>", fp);
	wl_page_esc(fp, title);
	fputs("</h1>\n", fp);
	fputs(BODY, fp);
	if ((s = wl_page_data(fp, root, err))) {
		wl_afile_abort(af);
		goto out;
	}
	wl_page_tail(fp, "run.js");
	s = wl_afile_commit(af, err);
out:
	cJSON_Delete(root);
	return s;
}
