/*
 * summary.c: SUMMARY.json and its per-run CSV row (see summary.h): the one
 * key table, the writer of both files and the reader.
 */
#define _POSIX_C_SOURCE 200809L
#include "formats/summary.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "core/afile.h"
#include "core/csvio.h"
#include "core/jsonio.h"
#include "formats/format.h"
#include "wl_version.h"

static const wl_format SUMMARY = {"SUMMARY.json", "wakeline summary", 1, "wakeline measure"};

typedef enum {
	K_ID,        /* long, the robot */
	K_LONG,      /* long */
	K_BOOL,      /* int, true/false */
	K_NUM,       /* double, null when NaN */
	K_LO,        /* double[2]: an interval, written under json as [lo, hi] */
	K_HI,        /* its second column */
	K_SIZE,      /* size_t count */
	K_INT,       /* int count */
	K_PERIOD,    /* derived: 1 / yaw_osc_freq_hz */
	K_COMMANDED, /* double, in JSON only when given */
	K_RATIO,     /* derived: yaw period / commanded period, in JSON only when given */
	K_VERDICT,   /* wl_verdict, a word */
	K_REASONS    /* the reasons: an array of strings, one cell joined with "; " */
} kind;

typedef struct {
	const char *col;  /* CSV column */
	const char *json; /* JSON key (NULL: none, the column belongs to the previous key) */
	kind k;
	size_t off; /* in wl_summary_run */
} field;

#define R(f) offsetof(wl_summary_run, f)
#define M(f) offsetof(wl_summary_run, m.f)
/* In the order of wl_summary_col. */
static const field FIELDS[WL_SUMCOL_N] = {
        {"id", "id", K_ID, R(id)},
        {"segment", "segment", K_LONG, R(segment)},
        {"headline", "headline", K_BOOL, R(headline)},
        {"verdict", "verdict", K_VERDICT, M(verdict)},
        {"verdict_reasons", "verdict_reasons", K_REASONS, M(reasons)},
        {"radius_m", "radius_m", K_NUM, M(radius_m)},
        {"radius_ci95_m_lo", "radius_ci95_m", K_LO, M(radius_ci95_m)},
        {"radius_ci95_m_hi", NULL, K_HI, M(radius_ci95_m)},
        {"curvature_per_m", "curvature_per_m", K_NUM, M(curvature_per_m)},
        {"curvature_ci95_per_m_lo", "curvature_ci95_per_m", K_LO, M(curvature_ci95_per_m)},
        {"curvature_ci95_per_m_hi", NULL, K_HI, M(curvature_ci95_per_m)},
        {"straight", "straight", K_BOOL, M(straight)},
        {"fit_rms_m", "fit_rms_m", K_NUM, M(fit_rms_m)},
        {"arc_deg", "arc_deg", K_NUM, M(arc_deg)},
        {"radius_body_diameters", "radius_body_diameters", K_NUM, M(radius_body_diameters)},
        {"path_length_m", "path_length_m", K_NUM, M(path_length_m)},
        {"net_displacement_m", "net_displacement_m", K_NUM, M(net_displacement_m)},
        {"straightness", "straightness", K_NUM, M(straightness)},
        {"straightness_ci95_lo", "straightness_ci95", K_LO, M(straightness_ci95)},
        {"straightness_ci95_hi", NULL, K_HI, M(straightness_ci95)},
        {"mean_speed_mps", "mean_speed_mps", K_NUM, M(mean_speed_mps)},
        {"mean_speed_ci95_mps_lo", "mean_speed_ci95_mps", K_LO, M(mean_speed_ci95_mps)},
        {"mean_speed_ci95_mps_hi", NULL, K_HI, M(mean_speed_ci95_mps)},
        {"speed_sd_mps", "speed_sd_mps", K_NUM, M(speed_sd_mps)},
        {"mean_yaw_rate_degps", "mean_yaw_rate_degps", K_NUM, M(mean_yaw_rate_degps)},
        {"heading_drift_degps", "heading_drift_degps", K_NUM, M(heading_drift_degps)},
        {"yaw_osc_freq_hz", "yaw_osc_freq_hz", K_NUM, M(yaw_osc_freq_hz)},
        {"yaw_osc_freq_ci95_hz_lo", "yaw_osc_freq_ci95_hz", K_LO, M(yaw_osc_freq_ci95_hz)},
        {"yaw_osc_freq_ci95_hz_hi", NULL, K_HI, M(yaw_osc_freq_ci95_hz)},
        {"yaw_osc_amp_deg", "yaw_osc_amp_deg", K_NUM, M(yaw_osc_amp_deg)},
        {"yaw_osc_amp_ci95_deg_lo", "yaw_osc_amp_ci95_deg", K_LO, M(yaw_osc_amp_ci95_deg)},
        {"yaw_osc_amp_ci95_deg_hi", NULL, K_HI, M(yaw_osc_amp_ci95_deg)},
        {"sway_amp_m", "sway_amp_m", K_NUM, M(sway_amp_m)},
        {"trim_start_s", "trim_start_s", K_NUM, R(trim_start_s)},
        {"duration_s", "duration_s", K_NUM, M(duration_s)},
        {"tracked_fraction", "tracked_fraction", K_NUM, M(tracked_fraction)},
        {"t_start_s", "t_start_s", K_NUM, M(t_start_s)},
        {"rows", "rows", K_SIZE, M(n_rows)},
        {"measured_rows", "measured_rows", K_SIZE, M(n_measured)},
        {"curvature_se_per_m", "curvature_se_per_m", K_NUM, M(curvature_se_per_m)},
        {"curvature_ar_order", "curvature_ar_order", K_INT, M(ar_order)},
        {"centre_x_m", "centre_x_m", K_NUM, M(centre_x_m)},
        {"centre_y_m", "centre_y_m", K_NUM, M(centre_y_m)},
        {"radius_taubin_m", "radius_taubin_m", K_NUM, M(radius_taubin_m)},
        {"radius_kasa_m", "radius_kasa_m", K_NUM, M(radius_kasa_m)},
        {"yaw_osc_r2", "yaw_osc_r2", K_NUM, M(yaw_osc_r2)},
        {"yaw_osc_period_s", "yaw_osc_period_s", K_PERIOD, 0},
        {"sway_osc_freq_hz", "sway_osc_freq_hz", K_NUM, M(sway_osc_freq_hz)},
        {"commanded_period_s", "commanded_period_s", K_COMMANDED, R(commanded_period_s)},
        {"period_ratio", "period_ratio", K_RATIO, 0},
        {"camera_moves", "camera_moves", K_NUM, R(camera_moves)},
        {"camera_suspect_s", "camera_suspect_s", K_NUM, R(camera_suspect_s)},
};
#undef R
#undef M

/* the budget (contracts.md) */
static const char *const K_BUDGET = "budget", *const K_TOTAL_SE = "total_se", *const K_SOURCES = "sources",
                         *const K_SOURCE = "source", *const K_SE = "se", *const K_SHARE = "share";
static const char *const BUDGET_MEASURES[WL_BM_N] = {"curvature_per_m", "radius_m",        "mean_speed_mps",
                                                     "yaw_osc_amp_deg", "yaw_osc_freq_hz", "straightness"};
static const char *const BUDGET_SOURCES[WL_BS_N] = {"fit", "calibration", "plane_height", "intrinsics",
                                                    "water_depth"};
static const char *const VERDICTS[] = {"", "ok", "check", "reject"};

const char *wl_budget_measure_key(wl_budget_measure m)
{
	return (unsigned)m < WL_BM_N ? BUDGET_MEASURES[m] : NULL;
}

const char *wl_budget_source_name(wl_budget_source s)
{
	return (unsigned)s < WL_BS_N ? BUDGET_SOURCES[s] : NULL;
}

const char *wl_verdict_name(wl_verdict v)
{
	return (unsigned)v <= WL_VERDICT_REJECT ? VERDICTS[v] : "";
}

/* provenance and the file's structure */
static const char *const K_PROV = "provenance", *const K_RUNS = "runs", *const K_TOOL = "tool",
                         *const K_TOOL_VERSION = "tool_version", *const K_TOOL_REVISION = "tool_revision",
                         *const K_INPUT = "input", *const K_BODY = "body_diameter_m",
                         *const K_MIN_ARC = "min_arc_deg";

const char *wl_summary_col_name(wl_summary_col col)
{
	return (unsigned)col < WL_SUMCOL_N ? FIELDS[col].col : NULL;
}

void wl_summary_measures_init(wl_summary_measures *m)
{
	double *d[] = {&m->t_start_s,
	               &m->duration_s,
	               &m->tracked_fraction,
	               &m->path_length_m,
	               &m->net_displacement_m,
	               &m->straightness,
	               &m->mean_speed_mps,
	               &m->speed_sd_mps,
	               &m->mean_yaw_rate_degps,
	               &m->heading_drift_degps,
	               &m->curvature_per_m,
	               &m->curvature_se_per_m,
	               &m->curvature_ci95_per_m[0],
	               &m->curvature_ci95_per_m[1],
	               &m->radius_m,
	               &m->radius_body_diameters,
	               &m->centre_x_m,
	               &m->centre_y_m,
	               &m->arc_deg,
	               &m->fit_rms_m,
	               &m->radius_taubin_m,
	               &m->radius_kasa_m,
	               &m->yaw_osc_freq_hz,
	               &m->yaw_osc_amp_deg,
	               &m->yaw_osc_r2,
	               &m->sway_osc_freq_hz,
	               &m->sway_amp_m,
	               &m->radius_ci95_m[0],
	               &m->radius_ci95_m[1],
	               &m->mean_speed_ci95_mps[0],
	               &m->mean_speed_ci95_mps[1],
	               &m->straightness_ci95[0],
	               &m->straightness_ci95[1],
	               &m->yaw_osc_amp_ci95_deg[0],
	               &m->yaw_osc_amp_ci95_deg[1],
	               &m->yaw_osc_freq_ci95_hz[0],
	               &m->yaw_osc_freq_ci95_hz[1]};
	memset(m, 0, sizeof *m);
	for (size_t i = 0; i < sizeof d / sizeof d[0]; i++)
		*d[i] = NAN;
	for (int k = 0; k < WL_BM_N; k++) {
		m->budget[k].total_se = NAN;
		for (int s = 0; s < WL_BS_N; s++)
			m->budget[k].se[s] = NAN;
	}
}

void wl_summary_init(wl_summary *s)
{
	memset(s, 0, sizeof *s);
	s->body_diameter_m = s->commanded_period_s = s->min_arc_deg = NAN;
}

static void run_release(wl_summary_run *r)
{
	for (size_t i = 0; i < r->nextra; i++) {
		free(r->extra[i].key);
		free(r->extra[i].value);
	}
	free(r->extra);
	r->extra = NULL;
	r->nextra = 0;
}

void wl_summary_release(wl_summary *s)
{
	if (!s)
		return;
	for (size_t i = 0; i < s->nruns; i++)
		run_release(&s->runs[i]);
	free(s->runs);
	free(s->input);
	wl_summary_init(s);
}

/* ---- values ---- */

static const void *at(const wl_summary_run *r, const field *f)
{
	return (const char *)r + f->off;
}

static double dval(const wl_summary_run *r, const field *f)
{
	double p;
	switch (f->k) {
	case K_NUM:
	case K_LO:
	case K_COMMANDED:
		return *(const double *)at(r, f);
	case K_HI:
		return ((const double *)at(r, f))[1];
	case K_PERIOD:
		return r->m.yaw_osc_freq_hz > 0 ? 1 / r->m.yaw_osc_freq_hz : NAN;
	case K_RATIO:
		p = r->m.yaw_osc_freq_hz > 0 ? 1 / r->m.yaw_osc_freq_hz : NAN;
		return p / r->commanded_period_s;
	default:
		return NAN;
	}
}

static long long ival(const wl_summary_run *r, const field *f)
{
	switch (f->k) {
	case K_ID:
	case K_LONG:
		return *(const long *)at(r, f);
	case K_BOOL:
	case K_INT:
		return *(const int *)at(r, f);
	case K_SIZE:
		return (long long)*(const size_t *)at(r, f);
	default:
		return 0;
	}
}

char *wl_summary_cell(const wl_summary_run *r, wl_summary_col col, char *buf, size_t cap)
{
	const field *f;
	char num[WL_NUMBUF];
	buf[0] = '\0';
	if ((unsigned)col >= WL_SUMCOL_N)
		return buf;
	f = &FIELDS[col];
	switch (f->k) {
	case K_BOOL:
		snprintf(buf, cap, "%s", ival(r, f) ? "true" : "false");
		break;
	case K_VERDICT:
		snprintf(buf, cap, "%s", wl_verdict_name(r->m.verdict));
		break;
	case K_REASONS: {
		size_t len = 0;
		for (int i = 0; i < r->m.n_reasons && len < cap; i++)
			len += (size_t)snprintf(buf + len, cap - len, "%s%s", i ? "; " : "", r->m.reasons[i]);
		break;
	}
	case K_ID:
	case K_LONG:
	case K_SIZE:
	case K_INT:
		snprintf(buf, cap, "%lld", ival(r, f));
		break;
	default:
		if (isfinite(dval(r, f)))
			snprintf(buf, cap, "%s", wl_fmt_g(num, dval(r, f), 10));
		break;
	}
	return buf;
}

/* ---- writing ---- */

/* A number with 10 significant digits, null when unknown. */
static cJSON *num_item(double v)
{
	char b[WL_NUMBUF];
	return isfinite(v) ? cJSON_CreateRaw(wl_fmt_g(b, v, 10)) : cJSON_CreateNull();
}

static void add_num(cJSON *o, const char *key, double v)
{
	cJSON_AddItemToObject(o, key, num_item(v));
}

/* "budget": per measure with a total, {"total_se", "sources": [{"source",
 * "se", "share"}]}, the sources that enter, in the order of wl_budget_source. */
void wl_summary_add_budget(cJSON *o, const wl_summary_measures *m)
{
	cJSON *b = NULL;
	for (int k = 0; k < WL_BM_N; k++) {
		const wl_summary_budget *bu = &m->budget[k];
		cJSON *e, *a;
		if (!isfinite(bu->total_se))
			continue;
		if (!b && !(b = cJSON_AddObjectToObject(o, K_BUDGET)))
			return;
		if (!(e = cJSON_AddObjectToObject(b, BUDGET_MEASURES[k])))
			return;
		add_num(e, K_TOTAL_SE, bu->total_se);
		if (!(a = cJSON_AddArrayToObject(e, K_SOURCES)))
			return;
		for (int s = 0; s < WL_BS_N; s++) {
			cJSON *src;
			if (!isfinite(bu->se[s]) || !(src = cJSON_CreateObject()))
				continue;
			cJSON_AddStringToObject(src, K_SOURCE, BUDGET_SOURCES[s]);
			add_num(src, K_SE, bu->se[s]);
			add_num(src, K_SHARE,
			        bu->total_se > 0 ? bu->se[s] * bu->se[s] / (bu->total_se * bu->total_se)
			                         : NAN);
			cJSON_AddItemToArray(a, src);
		}
	}
}

static cJSON *run_json(const wl_summary_run *r)
{
	cJSON *o = cJSON_CreateObject(), *a;
	if (!o)
		return NULL;
	for (size_t i = 0; i < WL_SUMCOL_N; i++) {
		const field *f = &FIELDS[i];
		switch (f->k) {
		case K_ID:
		case K_LONG:
		case K_SIZE:
		case K_INT:
			cJSON_AddNumberToObject(o, f->json, (double)ival(r, f));
			break;
		case K_BOOL:
			cJSON_AddBoolToObject(o, f->json, (int)ival(r, f));
			break;
		case K_LO:
			if ((a = cJSON_AddArrayToObject(o, f->json))) {
				cJSON_AddItemToArray(a, num_item(((const double *)at(r, f))[0]));
				cJSON_AddItemToArray(a, num_item(((const double *)at(r, f))[1]));
			}
			break;
		case K_HI:
			break;
		case K_COMMANDED:
		case K_RATIO:
			if (isfinite(r->commanded_period_s))
				add_num(o, f->json, dval(r, f));
			break;
		case K_VERDICT:
			if (r->m.verdict != WL_VERDICT_NONE)
				cJSON_AddStringToObject(o, f->json, wl_verdict_name(r->m.verdict));
			break;
		case K_REASONS:
			if (r->m.verdict != WL_VERDICT_NONE && (a = cJSON_AddArrayToObject(o, f->json)))
				for (int k = 0; k < r->m.n_reasons; k++)
					cJSON_AddItemToArray(a, cJSON_CreateString(r->m.reasons[k]));
			break;
		default:
			add_num(o, f->json, dval(r, f));
		}
	}
	wl_summary_add_budget(o, &r->m);
	return o;
}

static cJSON *summary_json(const wl_summary *s)
{
	cJSON *root = cJSON_CreateObject(), *prov, *runs;
	if (!root)
		return NULL;
	wl_format_add_json(&SUMMARY, root);
	prov = cJSON_AddObjectToObject(root, K_PROV);
	if (prov) {
		cJSON_AddStringToObject(prov, K_TOOL, SUMMARY.producer);
		cJSON_AddStringToObject(prov, K_TOOL_VERSION, WL_VERSION);
		cJSON_AddStringToObject(prov, K_TOOL_REVISION, WL_VERSION_GIT);
		cJSON_AddStringToObject(prov, K_INPUT, s->input ? s->input : "");
		add_num(prov, K_BODY, s->body_diameter_m);
		add_num(prov, FIELDS[WL_SUMCOL_COMMANDED_PERIOD].json, s->commanded_period_s);
		add_num(prov, K_MIN_ARC, s->min_arc_deg);
	}
	runs = cJSON_AddArrayToObject(root, K_RUNS);
	for (size_t i = 0; runs && i < s->nruns; i++) {
		cJSON *o = run_json(&s->runs[i]);
		if (!o) {
			cJSON_Delete(root);
			return NULL;
		}
		cJSON_AddItemToArray(runs, o);
	}
	return root;
}

static void write_csv(FILE *fp, const wl_summary *s)
{
	wl_csv_writer w;
	char cell[WL_SUMMARY_CELL];
	wl_csvw_init(&w, fp);
	for (size_t c = 0; c < WL_SUMCOL_N; c++)
		wl_csvw_str(&w, FIELDS[c].col);
	wl_csvw_end(&w);
	for (size_t i = 0; i < s->nruns; i++) {
		for (size_t c = 0; c < WL_SUMCOL_N; c++)
			wl_csvw_str(&w, wl_summary_cell(&s->runs[i], (wl_summary_col)c, cell, sizeof cell));
		wl_csvw_end(&w);
	}
}

wl_status wl_summary_write(const char *json_path, const char *csv_path, const wl_summary *s, wl_err *err)
{
	cJSON *root = summary_json(s);
	char *text = NULL;
	wl_afile *fc = NULL, *fj = NULL;
	wl_status st;
	if (!root || !(text = cJSON_Print(root))) {
		cJSON_Delete(root);
		return wl_err_set(err, WL_ENOMEM, "out of memory writing '%s'", json_path);
	}
	cJSON_Delete(root);
	if ((csv_path && (st = wl_afile_open(csv_path, &fc, err))) ||
	    (st = wl_afile_open(json_path, &fj, err)))
		goto out;
	if (fc)
		write_csv(wl_afile_fp(fc), s);
	fputs(text, wl_afile_fp(fj));
	fputc('\n', wl_afile_fp(fj));
	/* both on disk before either replaces a previous output: a failure up to
	 * here leaves the previous table and summary as they were */
	if ((st = wl_afile_sync(fc, err)) || (st = wl_afile_sync(fj, err)))
		goto out;
	/* the table first, so that SUMMARY.json exists only when both were
	 * written; should the last rename fail, the new table stays (it is
	 * complete, and removing it would lose the previous one too) */
	st = wl_afile_commit(fc, err);
	fc = NULL;
	if (st)
		goto out;
	st = wl_afile_commit(fj, err);
	fj = NULL;
out:
	wl_afile_abort(fc);
	wl_afile_abort(fj);
	cJSON_free(text);
	return st;
}

/* ---- reading ---- */

static const field *find_key(const char *key)
{
	for (size_t i = 0; i < WL_SUMCOL_N; i++)
		if (FIELDS[i].json && strcmp(FIELDS[i].json, key) == 0)
			return &FIELDS[i];
	return NULL;
}

static int whole(const cJSON *v, double lo, double hi)
{
	return cJSON_IsNumber(v) && v->valuedouble == floor(v->valuedouble) && v->valuedouble >= lo &&
	       v->valuedouble <= hi;
}

/* A number or null (NaN); 0 when it is neither. */
static int num_or_null(const cJSON *v, double *out)
{
	if (cJSON_IsNull(v)) {
		*out = NAN;
		return 1;
	}
	if (!cJSON_IsNumber(v))
		return 0;
	*out = v->valuedouble;
	return 1;
}

static wl_status bad(const char *name, size_t i, const char *key, const char *want, wl_err *err)
{
	return wl_err_set(err, WL_EFORMAT, "%s: runs[%zu]: key '%s' must be %s: rewrite the file with `%s`",
	                  name, i, key, want, SUMMARY.producer);
}

static int extra_add(wl_summary_run *r, const char *key, const char *suffix, const char *value)
{
	wl_summary_extra *e = realloc(r->extra, (r->nextra + 1) * sizeof *e);
	size_t n = strlen(key) + strlen(suffix) + 1;
	if (!e)
		return 0;
	r->extra = e;
	e = &r->extra[r->nextra];
	e->key = malloc(n);
	e->value = strdup(value);
	if (!e->key || !e->value) {
		free(e->key);
		free(e->value);
		return 0;
	}
	snprintf(e->key, n, "%s%s", key, suffix);
	r->nextra++;
	return 1;
}

static void text_of(const cJSON *v, char *buf, size_t cap)
{
	char num[WL_NUMBUF];
	buf[0] = '\0';
	if (cJSON_IsNumber(v))
		snprintf(buf, cap, "%s", wl_fmt_g(num, v->valuedouble, 10));
	else if (cJSON_IsBool(v))
		snprintf(buf, cap, "%s", cJSON_IsTrue(v) ? "true" : "false");
	else if (cJSON_IsString(v))
		snprintf(buf, cap, "%s", v->valuestring);
}

/* An array of strings (verdict_reasons) as one text joined with "; ", the
 * way contracts.md puts it in summary.csv; 0 when v is not one. */
static int joined_strings(const cJSON *v, char *buf, size_t cap)
{
	const cJSON *e;
	size_t len = 0;
	buf[0] = '\0';
	if (cJSON_GetArraySize(v) == 0)
		return 0;
	cJSON_ArrayForEach(e, v)
	{
		if (!cJSON_IsString(e))
			return 0;
		len += (size_t)snprintf(buf + len, len < cap ? cap - len : 0, "%s%s", len ? "; " : "",
		                        e->valuestring);
	}
	return 1;
}

/* A key this version does not know: scalars, pairs (as key_lo, key_hi) and
 * lists of strings (joined) are kept as text. */
static wl_status read_extra(const char *name, const cJSON *v, wl_summary_run *r, wl_err *err)
{
	char buf[1024];
	int ok = 1;
	if (cJSON_IsArray(v) && joined_strings(v, buf, sizeof buf)) {
		ok = extra_add(r, v->string, "", buf);
	} else if (cJSON_IsArray(v)) {
		if (cJSON_GetArraySize(v) == 2) {
			text_of(cJSON_GetArrayItem(v, 0), buf, sizeof buf);
			ok = extra_add(r, v->string, "_lo", buf);
			text_of(cJSON_GetArrayItem(v, 1), buf, sizeof buf);
			ok = ok && extra_add(r, v->string, "_hi", buf);
		}
	} else if (!cJSON_IsObject(v)) {
		text_of(v, buf, sizeof buf);
		ok = extra_add(r, v->string, "", buf);
	}
	return ok ? WL_OK : wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", name);
}

static wl_status read_value(const char *name, size_t i, const field *f, const cJSON *v, wl_summary_run *r,
                            wl_err *err)
{
	void *p = (char *)r + f->off;
	double d;
	switch (f->k) {
	case K_ID:
	case K_LONG:
		if (!whole(v, -1e15, 1e15))
			return bad(name, i, f->json, "a whole number", err);
		*(long *)p = (long)v->valuedouble;
		break;
	case K_BOOL:
		if (!cJSON_IsBool(v))
			return bad(name, i, f->json, "true or false", err);
		*(int *)p = cJSON_IsTrue(v);
		break;
	case K_SIZE:
	case K_INT:
		if (!whole(v, 0, 1e9))
			return bad(name, i, f->json, "a count", err);
		if (f->k == K_SIZE)
			*(size_t *)p = (size_t)v->valuedouble;
		else
			*(int *)p = (int)v->valuedouble;
		break;
	case K_LO:
		if (!cJSON_IsArray(v) || cJSON_GetArraySize(v) != 2 ||
		    !num_or_null(cJSON_GetArrayItem(v, 0), &((double *)p)[0]) ||
		    !num_or_null(cJSON_GetArrayItem(v, 1), &((double *)p)[1]))
			return bad(name, i, f->json, "[lo, hi] (numbers or null)", err);
		break;
	case K_NUM:
	case K_COMMANDED:
		if (!num_or_null(v, &d))
			return bad(name, i, f->json, "a number or null", err);
		*(double *)p = d;
		break;
	case K_VERDICT: {
		int k = 0;
		if (cJSON_IsString(v))
			for (k = WL_VERDICT_REJECT; k > WL_VERDICT_NONE; k--)
				if (strcmp(v->valuestring, VERDICTS[k]) == 0)
					break;
		if (k == WL_VERDICT_NONE)
			return bad(name, i, f->json, "\"ok\", \"check\" or \"reject\"", err);
		r->m.verdict = (wl_verdict)k;
		break;
	}
	case K_REASONS: {
		const cJSON *e;
		if (!cJSON_IsArray(v))
			return bad(name, i, f->json, "an array of strings", err);
		r->m.n_reasons = 0;
		cJSON_ArrayForEach(e, v)
		{
			if (!cJSON_IsString(e))
				return bad(name, i, f->json, "an array of strings", err);
			if (r->m.n_reasons < WL_SUMMARY_MAX_REASONS)
				snprintf(r->m.reasons[r->m.n_reasons++], WL_SUMMARY_REASON_LEN, "%s",
				         e->valuestring);
		}
		break;
	}
	default: /* derived values are computed again, not read */
		break;
	}
	return WL_OK;
}

/* "budget" (see add_budget); a measure or source this version does not know
 * is passed over. */
static wl_status read_budget(const char *name, size_t i, const cJSON *b, wl_summary_run *r, wl_err *err)
{
	const cJSON *e;
	if (!cJSON_IsObject(b))
		return bad(name, i, K_BUDGET, "an object", err);
	cJSON_ArrayForEach(e, b)
	{
		const cJSON *src, *srcs = cJSON_GetObjectItemCaseSensitive(e, K_SOURCES);
		int k;
		double d;
		for (k = 0; k < WL_BM_N && strcmp(e->string, BUDGET_MEASURES[k]) != 0; k++)
			;
		if (k == WL_BM_N)
			continue;
		if (!cJSON_IsObject(e) || !num_or_null(cJSON_GetObjectItemCaseSensitive(e, K_TOTAL_SE), &d) ||
		    !cJSON_IsArray(srcs))
			return bad(name, i, K_BUDGET,
			           "an object of {\"total_se\", \"sources\": [...]} per measure", err);
		r->m.budget[k].total_se = d;
		cJSON_ArrayForEach(src, srcs)
		{
			const cJSON *sn = cJSON_GetObjectItemCaseSensitive(src, K_SOURCE);
			int s;
			if (!cJSON_IsString(sn) ||
			    !num_or_null(cJSON_GetObjectItemCaseSensitive(src, K_SE), &d))
				return bad(name, i, K_BUDGET, "sources of {\"source\", \"se\", \"share\"}",
				           err);
			for (s = 0; s < WL_BS_N && strcmp(sn->valuestring, BUDGET_SOURCES[s]) != 0; s++)
				;
			if (s < WL_BS_N)
				r->m.budget[k].se[s] = d;
		}
	}
	return WL_OK;
}

static wl_status read_run(const char *name, size_t i, const cJSON *o, wl_summary_run *r, wl_err *err)
{
	const cJSON *v;
	wl_status st;
	int have_id = 0, have_seg = 0;
	memset(r, 0, sizeof *r);
	wl_summary_measures_init(&r->m);
	r->trim_start_s = r->commanded_period_s = NAN;
	r->camera_moves = r->camera_suspect_s = NAN;
	if (!cJSON_IsObject(o))
		return wl_err_set(err, WL_EFORMAT,
		                  "%s: runs[%zu] is not an object: rewrite the file with `%s`", name, i,
		                  SUMMARY.producer);
	cJSON_ArrayForEach(v, o)
	{
		const field *f = v->string ? find_key(v->string) : NULL;
		if (!v->string)
			continue;
		if (strcmp(v->string, K_BUDGET) == 0)
			st = read_budget(name, i, v, r, err);
		else
			st = f ? read_value(name, i, f, v, r, err) : read_extra(name, v, r, err);
		if (st)
			return st;
		have_id |= f == &FIELDS[WL_SUMCOL_ID];
		have_seg |= f == &FIELDS[WL_SUMCOL_SEGMENT];
	}
	if (!have_id || !have_seg)
		return wl_err_set(err, WL_EFORMAT, "%s: runs[%zu] has no '%s': rewrite the file with `%s`",
		                  name, i,
		                  have_id ? FIELDS[WL_SUMCOL_SEGMENT].json : FIELDS[WL_SUMCOL_ID].json,
		                  SUMMARY.producer);
	return WL_OK;
}

wl_status wl_summary_parse(const char *name, const char *text, size_t len, wl_summary *s, wl_err *err)
{
	cJSON *root = NULL;
	const cJSON *prov, *runs, *o;
	wl_status st;
	wl_summary_init(s);
	if ((st = wl_json_parse(name, text, len, &root, err)) ||
	    (st = wl_format_check_json(&SUMMARY, root, name, err)))
		goto out;
	prov = cJSON_GetObjectItemCaseSensitive(root, K_PROV);
	if (!(s->input = strdup(wl_json_string_or(prov, K_INPUT, "")))) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", name);
		goto out;
	}
	s->body_diameter_m = wl_json_number_or(prov, K_BODY, NAN);
	s->commanded_period_s = wl_json_number_or(prov, FIELDS[WL_SUMCOL_COMMANDED_PERIOD].json, NAN);
	s->min_arc_deg = wl_json_number_or(prov, K_MIN_ARC, NAN);
	runs = cJSON_GetObjectItemCaseSensitive(root, K_RUNS);
	if (!cJSON_IsArray(runs)) {
		st = wl_err_set(err, WL_EFORMAT, "%s: no \"%s\" array: rewrite the file with `%s`", name,
		                K_RUNS, SUMMARY.producer);
		goto out;
	}
	if (cJSON_GetArraySize(runs) > 0 &&
	    !(s->runs = calloc((size_t)cJSON_GetArraySize(runs), sizeof *s->runs))) {
		st = wl_err_set(err, WL_ENOMEM, "out of memory reading '%s'", name);
		goto out;
	}
	cJSON_ArrayForEach(o, runs)
	{
		st = read_run(name, s->nruns, o, &s->runs[s->nruns], err);
		s->nruns++; /* a failed run may hold extras to free */
		if (st)
			break;
	}
out:
	cJSON_Delete(root);
	return st;
}

wl_status wl_summary_read(const char *path, wl_summary *s, wl_err *err)
{
	char *text = NULL;
	size_t len = 0;
	wl_status st;
	wl_summary_init(s);
	if ((st = wl_read_file(path, WL_JSON_MAX_BYTES, &text, &len, err)))
		return st;
	st = wl_summary_parse(path, text, len, s, err);
	free(text);
	return st;
}
