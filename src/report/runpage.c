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
 * Inputs are the files of the folder, read through their formats
 * (formats/clean.h, formats/summary.h): clean.csv, summary.json and, when
 * present, clean.json; and clip.json (clip name and parameters, written by
 * batch), process.log and trail.png.  The spectrum and residuals are recomputed
 * from clean.csv by the scene's analyse function, which the callers above
 * the stages fill with the measure module's own (wl_process_analyse_run),
 * so they are those the summary's numbers come from.
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
#include "formats/clean.h"
#include "formats/summary.h"
#include "report/page.h"
#include "wl_version.h"

#define RP_MAX_IDS 64
#define RP_MAX_POINTS 4000     /* per robot, for the time plots and the map */
#define RP_MAX_BINS 1200       /* spectrum points */
#define RP_MAX_LOG_LINES 400   /* process.log lines shown */
#define RP_MAX_TRAIL (8 << 20) /* bytes of trail.png embedded */

typedef struct {
	long id;
	size_t n, cap;
	double *t, *x, *y, *h, *v, *yr;
	int *seg;
	unsigned char *meas;
	size_t n_measured, n_filled, n_outlier, n_gaps; /* rows by status; spans cut as gaps */
	int in_gap;
} rtrack;

typedef struct {
	const char *path;
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

static wl_status on_row(const wl_clean_row *row, void *ctx, wl_err *err)
{
	rreader *r = ctx;
	rtrack *tr = NULL;
	size_t i;
	for (i = 0; i < r->ntr; i++)
		if (r->tr[i].id == row->id)
			tr = &r->tr[i];
	if (!tr) {
		if (r->ntr == RP_MAX_IDS)
			return wl_err_set(err, WL_ELIMIT,
			                  "%s:%ld: more than %d robot ids: the run page shows at most %d",
			                  r->path, row->line, RP_MAX_IDS, RP_MAX_IDS);
		tr = &r->tr[r->ntr++];
		tr->id = row->id;
	}
	if (tr->n == tr->cap && !rtrack_grow(tr))
		return wl_err_set(err, WL_ENOMEM, "%s: out of memory at line %ld", r->path, row->line);
	tr->t[tr->n] = row->t_s;
	tr->x[tr->n] = row->x_m;
	tr->y[tr->n] = row->y_m;
	tr->h[tr->n] = row->heading_rad;
	tr->v[tr->n] = row->speed_mps;
	tr->yr[tr->n] = row->yaw_rate_radps;
	tr->seg[tr->n] = row->segment;
	tr->meas[tr->n] = row->status == WL_ST_MEASURED;
	tr->n_measured += row->status == WL_ST_MEASURED;
	tr->n_filled += row->status == WL_ST_FILLED;
	tr->n_outlier += row->status == WL_ST_OUTLIER;
	tr->n_gaps += row->cut == WL_CUT_GAP && !tr->in_gap;
	tr->in_gap = row->cut == WL_CUT_GAP;
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
	{
		char idt[32];
		snprintf(idt, sizeof idt, "%ld", tr->id);
		cJSON_AddStringToObject(o, "id", idt);
	}
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

/* A run's value in a column of the per-run table (formats/summary.h), NaN
 * when unknown. */
static double colval(const wl_summary_run *run, wl_summary_col col)
{
	char cell[WL_SUMMARY_CELL];
	double v;
	wl_summary_cell(run, col, cell, sizeof cell);
	return wl_parse_double(cell, &v) ? v : NAN;
}

/* The run as the page's script reads it: every column of the per-run table
 * under its name (numbers, true/false, null when unknown), the keys the
 * reader kept as text; verdict_reasons as a list. */
static cJSON *run_object(const wl_summary_run *run)
{
	cJSON *o = cJSON_CreateObject();
	char cell[WL_SUMMARY_CELL];
	double v;
	for (int c = 0; o && c < WL_SUMCOL_N; c++) {
		const char *name = wl_summary_col_name((wl_summary_col)c);
		if (c == WL_SUMCOL_VERDICT_REASONS) { /* a list, as in summary.json */
			cJSON *a = cJSON_AddArrayToObject(o, name);
			for (int k = 0; a && k < run->m.n_reasons; k++)
				cJSON_AddItemToArray(a, cJSON_CreateString(run->m.reasons[k]));
			continue;
		}
		wl_summary_cell(run, (wl_summary_col)c, cell, sizeof cell);
		if (!strcmp(cell, "true") || !strcmp(cell, "false"))
			cJSON_AddBoolToObject(o, name, cell[0] == 't');
		else if (wl_parse_double(cell, &v))
			cJSON_AddNumberToObject(o, name, v);
		else if (cell[0])
			cJSON_AddStringToObject(o, name, cell); /* the verdict */
		else
			cJSON_AddNullToObject(o, name);
	}
	for (size_t i = 0; o && i < run->nextra; i++)
		cJSON_AddStringToObject(o, run->extra[i].key, run->extra[i].value);
	return o;
}

typedef struct {
	const char *label;
	wl_summary_col col;
	double scale;
	int fixed; /* >= 0: that many decimals, no interval */
} number_row;

static const number_row NUMBERS[] = {
        {"radius (m), + counter-clockwise", WL_SUMCOL_RADIUS, 1, -1},
        {"curvature (1/m)", WL_SUMCOL_CURVATURE, 1, -1},
        {"arc swept (\xc2\xb0)", WL_SUMCOL_ARC, 1, 0},
        {"straightness", WL_SUMCOL_STRAIGHTNESS, 1, -1},
        {"path length (m)", WL_SUMCOL_PATH_LENGTH, 1, -1},
        {"mean speed (m/s)", WL_SUMCOL_MEAN_SPEED, 1, -1},
        {"speed sd (m/s)", WL_SUMCOL_SPEED_SD, 1, -1},
        {"mean yaw rate (\xc2\xb0/s)", WL_SUMCOL_MEAN_YAW_RATE, 1, -1},
        {"yaw oscillation (Hz)", WL_SUMCOL_YAW_FREQ, 1, -1},
        {"yaw oscillation amplitude (\xc2\xb0)", WL_SUMCOL_YAW_AMP, 1, -1},
        {"share of yaw variance in that sine", WL_SUMCOL_YAW_R2, 1, 2},
        {"sway amplitude (mm)", WL_SUMCOL_SWAY_AMP, 1000, -1},
        {"circle fit RMS (mm)", WL_SUMCOL_FIT_RMS, 1000, -1},
        {"duration analysed (s)", WL_SUMCOL_DURATION, 1, 2},
        {"start trimmed (s)", WL_SUMCOL_TRIM_START, 1, 2},
        {"tracked (%)", WL_SUMCOL_TRACKED, 100, 1},
};

/* The key numbers for people: value ± half its 95% interval where one is
 * known (the curvature's; the radius's from it; the budget's total
 * standard error x 1.96 for the others), else 3 significant digits. */
/* The budget's total standard error of a column's measure, NaN when none. */
static double budget_se(const wl_summary_run *run, wl_summary_col col)
{
	static const struct {
		wl_summary_col col;
		wl_budget_measure m;
	} map[] = {{WL_SUMCOL_CURVATURE, WL_BM_CURVATURE}, {WL_SUMCOL_RADIUS, WL_BM_RADIUS},
	           {WL_SUMCOL_MEAN_SPEED, WL_BM_SPEED},    {WL_SUMCOL_YAW_AMP, WL_BM_YAW_AMP},
	           {WL_SUMCOL_YAW_FREQ, WL_BM_YAW_FREQ},   {WL_SUMCOL_STRAIGHTNESS, WL_BM_STRAIGHTNESS}};
	for (size_t i = 0; i < sizeof map / sizeof map[0]; i++)
		if (map[i].col == col)
			return run->m.budget[map[i].m].total_se;
	return NAN;
}

static void add_numbers(cJSON *o, const wl_summary_run *run)
{
	cJSON *a = cJSON_AddArrayToObject(o, "numbers");
	double lo = run->m.curvature_ci95_per_m[0], hi = run->m.curvature_ci95_per_m[1];
	for (size_t i = 0; a && i < sizeof NUMBERS / sizeof NUMBERS[0]; i++) {
		const number_row *nr = &NUMBERS[i];
		double v = colval(run, nr->col), half = NAN;
		double se = budget_se(run, nr->col);
		char text[WL_NUMFMT_BUF], full[WL_NUMFMT_BUF];
		cJSON *row;
		if (nr->col == WL_SUMCOL_RADIUS && run->m.straight)
			snprintf(text, sizeof text, "straight");
		else if (!isfinite(v))
			snprintf(text, sizeof text, "n/a");
		else {
			if (nr->col == WL_SUMCOL_CURVATURE)
				half = 0.5 * (hi - lo);
			else if (nr->col == WL_SUMCOL_RADIUS && lo * hi > 0)
				half = 0.5 * fabs(1 / lo - 1 / hi);
			else if (isfinite(se))
				half = 1.959964 * se;
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
static wl_status add_analysis(cJSON *o, wl_report_analyse_fn analyse, const rtrack *tr, int segment,
                              double min_arc_deg, wl_err *err)
{
	segrows s;
	wl_report_seg in;
	wl_report_seg_analysis res;
	double *yaw = NULL, *off = NULL, *f = NULL, *p = NULL;
	size_t nb = 0, i;
	wl_status st = WL_OK;
	if (!analyse)
		return WL_OK; /* no measure functions given: the numbers only */
	if (!segrows_take(tr, segment, &s))
		return wl_err_set(err, WL_ENOMEM, "out of memory for the run page");
	if (s.n < 16)
		goto out; /* too short to analyse: the page says so */
	in.n = s.n, in.t_s = s.t, in.x_m = s.x, in.y_m = s.y, in.heading_rad = s.h;
	in.speed_mps = s.v, in.yaw_rate_radps = s.yr, in.measured = s.meas;
	in.min_arc_deg = min_arc_deg;
	yaw = malloc(s.n * sizeof *yaw);
	off = malloc(s.n * sizeof *off);
	f = malloc((s.n + 2) * sizeof *f);
	p = malloc((s.n + 2) * sizeof *p);
	if (!yaw || !off || !f || !p) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory for the run page");
		goto out;
	}
	res.yaw_rad = yaw, res.offset_m = off, res.f_hz = f, res.power = p, res.cap = s.n + 2;
	res.nbins = 0, res.n_used = 0, res.yaw_peak_hz = NAN;
	if (analyse(&in, &res) != WL_OK)
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
	if ((nb = res.nbins) > 0) {
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
		cJSON_AddNumberToObject(sp, "peak_hz", res.yaw_peak_hz);
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

/* The tank outline and floor markers, when known. */
static void add_scene(cJSON *root, const wl_report_scene *sc)
{
	cJSON *o = cJSON_AddObjectToObject(root, "scene"), *a, *m;
	size_t i;
	if (!o)
		return;
	a = cJSON_AddArrayToObject(o, "outline");
	for (i = 0; sc && a && sc->n_outline >= 2 && i < sc->n_outline; i++) {
		cJSON *p = cJSON_CreateArray();
		cJSON_AddItemToArray(p, cJSON_CreateNumber(sc->outline_m[i][0]));
		cJSON_AddItemToArray(p, cJSON_CreateNumber(sc->outline_m[i][1]));
		cJSON_AddItemToArray(a, p);
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

/* What the clean stage did to each robot: the rows' statuses and the gaps
 * counted from clean.csv, where it trimmed the start and how the track ended
 * from the sidecar (side may be NULL). */
static void add_clean(cJSON *root, const rreader *rd, const wl_clean_sidecar *side)
{
	cJSON *a = cJSON_AddArrayToObject(root, "clean");
	for (size_t i = 0; a && i < rd->ntr; i++) {
		const rtrack *t = &rd->tr[i];
		cJSON *o = cJSON_CreateObject(), *x;
		cJSON_AddNumberToObject(o, "id", (double)t->id);
		cJSON_AddNumberToObject(o, "measured", (double)t->n_measured);
		cJSON_AddNumberToObject(o, "filled", (double)t->n_filled);
		x = cJSON_AddObjectToObject(o, "outliers");
		cJSON_AddNumberToObject(x, "total", (double)t->n_outlier);
		cJSON_AddNumberToObject(o, "gap_count", (double)t->n_gaps);
		for (size_t k = 0; side && k < side->nrobots; k++) {
			const wl_clean_sidecar_robot *r = &side->robots[k];
			if (r->id != t->id)
				continue;
			cJSON_AddBoolToObject(o, "still", r->still);
			x = cJSON_AddObjectToObject(o, "trim");
			if (isfinite(r->trim_s))
				cJSON_AddNumberToObject(x, "at_s", r->trim_s);
			cJSON_AddStringToObject(x, "reason", r->trim_reason);
			x = cJSON_AddObjectToObject(o, "end");
			if (isfinite(r->end_s))
				cJSON_AddNumberToObject(x, "at_s", r->end_s);
			cJSON_AddStringToObject(x, "reason", r->end_reason);
		}
		cJSON_AddItemToArray(a, o);
	}
}

/* ---- the page ------------------------------------------------------------- */

static wl_status build(const char *dir, const wl_report_scene *scene, cJSON *root, char *title, size_t tcap,
                       wl_err *err)
{
	char path[4200];
	cJSON *clip = NULL, *runs_out, *robots;
	const cJSON *params;
	wl_summary sum;
	wl_clean_sidecar side;
	int have_side;
	wl_report_scene_buf *sb = NULL;
	wl_report_analyse_fn analyse = scene ? scene->analyse : NULL; /* kept if the scene is replaced */
	rreader rd;
	size_t i;
	wl_status s = WL_OK;

	memset(&rd, 0, sizeof rd);
	memset(&side, 0, sizeof side);
	snprintf(path, sizeof path, "%s/summary.json", dir);
	if ((s = wl_summary_read(path, &sum, err))) {
		wl_summary_release(&sum);
		return s;
	}
	snprintf(path, sizeof path, "%s/clean.json", dir);
	have_side = wl_clean_sidecar_read(path, &side, NULL) == WL_OK;
	snprintf(path, sizeof path, "%s/clip.json", dir);
	wl_json_load(path, &clip, NULL); /* the batch's marker: name and parameters */
	{
		const char *slash = strrchr(dir, '/');
		const char *name = wl_json_string_or(clip, "clip",
		                                     scene && scene->clip_name ? scene->clip_name
		                                     : slash && slash[1]       ? slash + 1
		                                                               : dir);
		snprintf(title, tcap, "%s", name);
		cJSON_AddStringToObject(root, "clip", name);
	}
	params = cJSON_GetObjectItemCaseSensitive(clip, "params");
	if (params) {
		cJSON_AddItemToObject(root, "params", cJSON_Duplicate(params, 1));
	} else { /* the batch's worker: the manifest row it was given */
		cJSON *po = cJSON_AddObjectToObject(root, "params");
		for (i = 0; scene && po && i < scene->nparams; i++)
			cJSON_AddStringToObject(po, scene->param_names[i], scene->param_values[i]);
	}
	cJSON_AddStringToObject(root, "tool", "wakeline " WL_VERSION);
	/* without a scene, the calibration clean.json names (its path as given then) */
	if ((!scene || (!scene->n_outline && !scene->n_markers)) && have_side && side.cal_path[0] &&
	    (sb = calloc(1, sizeof *sb)) != NULL && wl_report_scene_load(side.cal_path, sb, NULL) == WL_OK)
		scene = &sb->scene;
	add_scene(root, scene);
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
		if (stat(path, &st) == 0 && (s = wl_clean_read(path, on_row, &rd, err)))
			goto out;
	}
	add_clean(root, &rd, have_side ? &side : NULL);
	robots = cJSON_AddArrayToObject(root, "robots");
	for (i = 0; i < rd.ntr; i++)
		if ((s = add_robot(robots, &rd.tr[i], err)))
			goto out;
	runs_out = cJSON_AddArrayToObject(root, "runs");
	for (size_t k = 0; k < sum.nruns; k++) {
		const wl_summary_run *run = &sum.runs[k];
		cJSON *o = cJSON_CreateObject(), *so = run_object(run);
		const rtrack *tr = NULL;
		char idt[32];
		cJSON_AddItemToArray(runs_out, o);
		snprintf(idt, sizeof idt, "%ld", run->id);
		cJSON_AddStringToObject(o, "id", idt);
		cJSON_AddNumberToObject(o, "segment", (double)run->segment);
		if (so)
			wl_summary_add_budget(so, &run->m);
		cJSON_AddItemToObject(o, "summary", so);
		add_numbers(o, run);
		for (i = 0; i < rd.ntr; i++)
			if (rd.tr[i].id == run->id)
				tr = &rd.tr[i];
		if (tr && (s = add_analysis(o, analyse, tr, (int)run->segment, sum.min_arc_deg, err)))
			goto out;
	}
out:
	for (i = 0; rd.tr && i < rd.ntr; i++)
		rtrack_free(&rd.tr[i]);
	free(rd.tr);
	wl_summary_release(&sum);
	if (have_side)
		wl_clean_sidecar_release(&side);
	wl_report_scene_release(sb);
	free(sb);
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
