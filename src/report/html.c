/*
 * html.c: report.html, one self-contained page over a batch's output
 * folder.  The runs of summary.csv are embedded as JSON and drawn by
 * src/report/assets/report.js (the runs table with its column chooser,
 * sort, filter and pages; the groups of replicates; the sweep plots as
 * inline SVG); the failures are plain HTML.  Nothing is loaded from the
 * network.  Also the run table's own bookkeeping (init, release, column
 * lookup).
 */
#define _POSIX_C_SOURCE 200809L
#include "report/report.h"

#include <stdlib.h>
#include <string.h>

#include <math.h>

#include "core/afile.h"
#include "core/csvio.h"
#include "core/numfmt.h"
#include "formats/summary.h"
#include "report/page.h"
#include "wl_version.h"

void wl_report_runs_init(wl_report_runs *t)
{
	memset(t, 0, sizeof *t);
}

void wl_report_runs_release(wl_report_runs *t)
{
	size_t i, j;
	if (!t)
		return;
	for (i = 0; i < t->nrows; i++) {
		wl_report_row *r = &t->rows[i];
		free(r->clip);
		free(r->folder);
		free(r->status);
		free(r->error);
		for (j = 0; r->cells && j < t->ncols; j++)
			free(r->cells[j]);
		free(r->cells);
	}
	for (i = 0; i < t->ncols; i++)
		free(t->cols[i]);
	free(t->cols);
	free(t->rows);
	wl_report_runs_init(t);
}

static double runnum(const wl_report_runs *t, size_t row, const char *name)
{
	int c = wl_report_runs_col(t, name);
	double v;
	if (c < 0 || !wl_parse_double(t->rows[row].cells[c], &v))
		return NAN;
	return v;
}

int wl_report_runs_col(const wl_report_runs *t, const char *name)
{
	size_t i;
	if (!name)
		return -1;
	for (i = 0; i < t->ncols; i++)
		if (strcmp(t->cols[i], name) == 0)
			return (int)i;
	return -1;
}

/* "value ± half" of the curvature and of the radius, by core/numfmt's rule
 * (the radius interval is 1 / the curvature interval); "" when unknown. */
static void interval_texts(const wl_report_runs *t, size_t i, char *kpm, char *rpm)
{
	double k = runnum(t, i, wl_summary_col_name(WL_SUMCOL_CURVATURE));
	double lo = runnum(t, i, wl_summary_col_name(WL_SUMCOL_CURVATURE_LO));
	double hi = runnum(t, i, wl_summary_col_name(WL_SUMCOL_CURVATURE_HI));
	double r = runnum(t, i, wl_summary_col_name(WL_SUMCOL_RADIUS));
	int cs = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_STRAIGHT));
	kpm[0] = rpm[0] = '\0';
	if (isfinite(k))
		wl_numfmt_pm(kpm, k, 0.5 * (hi - lo));
	if (cs >= 0 && strcmp(t->rows[i].cells[cs], "true") == 0)
		snprintf(rpm, WL_NUMFMT_BUF, "straight");
	else if (isfinite(r))
		wl_numfmt_pm(rpm, r, lo * hi > 0 ? 0.5 * fabs(1 / lo - 1 / hi) : NAN);
}

/* The page's data: columns, runs (clip, folder, cells, the two interval
 * texts) and the sweep settings. */
static cJSON *page_data(const wl_report_runs *t, const wl_report_sweep_opts *o, const char *title)
{
	cJSON *root = cJSON_CreateObject(), *cols, *rows;
	char kpm[WL_NUMFMT_BUF], rpm[WL_NUMFMT_BUF];
	double body = wl_report_body_diameter(t, o);
	size_t i, j;
	if (!root)
		return NULL;
	cJSON_AddStringToObject(root, "title", title);
	cJSON_AddStringToObject(root, "tool", "wakeline " WL_VERSION);
	cols = cJSON_AddArrayToObject(root, "cols");
	for (j = 0; j < t->ncols; j++)
		cJSON_AddItemToArray(cols, cJSON_CreateString(t->cols[j]));
	cJSON_AddNumberToObject(root, "nparams", (double)t->nparams);
	if (o && o->x_col)
		cJSON_AddStringToObject(root, "x_col", o->x_col);
	else
		cJSON_AddNullToObject(root, "x_col");
	if (o && o->group_col)
		cJSON_AddStringToObject(root, "group_col", o->group_col);
	else
		cJSON_AddNullToObject(root, "group_col");
	if (body > 0)
		cJSON_AddNumberToObject(root, "body_m", body);
	else
		cJSON_AddNullToObject(root, "body_m");
	rows = cJSON_AddArrayToObject(root, "rows");
	for (i = 0; rows && i < t->nrows; i++) {
		const wl_report_row *r = &t->rows[i];
		cJSON *a;
		if (strcmp(r->status, "ok") != 0)
			continue;
		a = cJSON_CreateArray();
		cJSON_AddItemToArray(rows, a);
		cJSON_AddItemToArray(a, cJSON_CreateString(r->clip));
		cJSON_AddItemToArray(a, cJSON_CreateString(r->folder));
		for (j = 0; j < t->ncols; j++)
			cJSON_AddItemToArray(a, cJSON_CreateString(r->cells[j]));
		interval_texts(t, i, kpm, rpm);
		cJSON_AddItemToArray(a, cJSON_CreateString(kpm));
		cJSON_AddItemToArray(a, cJSON_CreateString(rpm));
	}
	return root;
}

static const char BODY[] =
        "<noscript><p><strong>This page draws its table and plots with JavaScript, which is "
        "off.</strong> Every number is in summary.csv.</p></noscript>\n"
        "<h2 id=\"runs-h\">Runs</h2>\n"
        "<div class=\"bar\"><input type=\"search\" id=\"filter\" aria-label=\"filter the runs\" "
        "placeholder=\"filter: words, or column=value, e.g. variant=fin curvature&gt;2\">"
        "<label><input type=\"checkbox\" id=\"headline\" checked> headline runs only</label>"
        "<details class=\"cols\"><summary>columns (<span id=\"colcount\"></span>)</summary><div>"
        "<button id=\"view-compact\">compact</button> <button id=\"view-all\">all columns</button>"
        "<div id=\"colboxes\"></div></div></details>"
        "<span id=\"filter-note\" class=\"note\"></span></div>\n"
        "<p class=\"note\">Click a column heading to sort, again to reverse; the clip opens its run page. "
        "Radius and curvature are shown as value &#177; half their 95% interval, rounded to what the "
        "interval supports; hover a value for its full precision, a verdict for its reasons. A filter "
        "term is a word to find, or <code>column</code> with <code>= != &lt; &lt;= &gt; &gt;=</code> "
        "or <code>~</code> (contains) and a value; terms must all hold.</p>\n"
        "<p class=\"note\" id=\"verdict-note\"></p>\n"
        "<div class=\"scroll\"><table id=\"runs\"></table></div>\n"
        "<div class=\"bar\"><button id=\"prev\">&#8249; previous</button><span id=\"shown\"></span>"
        "<button id=\"next\">next &#8250;</button><label>rows per page <select id=\"pagesize\">"
        "<option>50</option><option selected>100</option><option>250</option><option>1000</option>"
        "</select></label></div>\n"
        "<h2 id=\"groups-h\">Groups of replicates</h2>\n"
        "<div class=\"bar\">group the runs shown above by: <span id=\"groupboxes\"></span>"
        "<span id=\"groupcount\" class=\"note\"></span></div>\n"
        "<p class=\"note\">Runs with the same values in the chosen columns form a group. For each "
        "measure: the mean &#177; half the 95% interval of the mean (Student t with n &#8722; 1 "
        "degrees of freedom, s / &#8730;n), and the sample standard deviation. The radius is 1 / the "
        "mean curvature, its interval 1 / the curvature's (\"straight\" when that contains 0).</p>\n"
        "<div class=\"scroll\"><table id=\"groups\"></table></div>\n"
        "<h2 id=\"sweep-h\">Sweep</h2>\n"
        "<div class=\"bar\"><label>x: <select id=\"sweep-x\"></select></label>"
        "<label>variant (colour and marker): <select id=\"sweep-by\"></select></label></div>\n"
        "<div id=\"sweep-plots\"></div>\n<div id=\"tip\" role=\"tooltip\"></div>\n";

wl_status wl_report_html(const wl_report_runs *t, const wl_report_sweep_opts *o, const char *dir,
                         const char *title, int with_sweep, wl_err *err)
{
	char path[4200];
	wl_afile *af = NULL;
	FILE *fp;
	size_t i, nok = 0, nfail = 0;
	cJSON *data = NULL;
	wl_status s;

	for (i = 0; i < t->nrows; i++) {
		if (strcmp(t->rows[i].status, "ok") == 0)
			nok++;
		else
			nfail++;
	}
	data = page_data(t, o, title);
	if (!data)
		return wl_err_set(err, WL_ENOMEM, "out of memory writing '%s/report.html'", dir);
	snprintf(path, sizeof path, "%s/report.html", dir);
	if ((s = wl_afile_open(path, &af, err))) {
		cJSON_Delete(data);
		return s;
	}
	fp = wl_afile_fp(af);
	wl_page_head(fp, title);
	fputs("<h1>", fp);
	wl_page_esc(fp, title);
	fprintf(fp,
	        "</h1>\n<p id=\"counts\">%zu runs, %zu clips failed or missing. "
	        "The whole table at full precision: <a href=\"summary.csv\">summary.csv</a>.</p>\n",
	        nok, nfail);
	fputs(BODY, fp);
	if (with_sweep)
		fputs("<p class=\"note\">For papers: the same plots as files, "
		      "<a href=\"sweep_curvature.svg\">sweep_curvature.svg</a> and "
		      "<a href=\"sweep_radius.svg\">sweep_radius.svg</a> (and .png), "
		      "with the batch's --x and --group.</p>\n",
		      fp);
	fputs("<h2 id=\"failures-h\">Failures</h2>\n", fp);
	if (!nfail) {
		fputs("<p id=\"nofailures\">None.</p>\n", fp);
	} else {
		fputs("<table id=\"failures\" class=\"fail\">\n<thead><tr><th class=\"t\">clip</th>"
		      "<th class=\"t\">status</th><th class=\"t\">message</th></tr></thead>\n<tbody>\n",
		      fp);
		for (i = 0; i < t->nrows; i++) {
			const wl_report_row *r = &t->rows[i];
			if (strcmp(r->status, "ok") == 0)
				continue;
			fputs("<tr class=\"failure\"><td>", fp);
			wl_page_esc(fp, r->clip);
			fputs("</td><td>", fp);
			wl_page_esc(fp, r->status);
			fputs("</td><td class=\"msg\">", fp);
			wl_page_esc(fp, r->error);
			fputs("</td></tr>\n", fp);
		}
		fputs("</tbody>\n</table>\n", fp);
	}
	fputs("<p class=\"note\">Made by wakeline " WL_VERSION ". The page is one file: it loads nothing "
	      "from the network; thumbnails and run pages are in the clips folder beside it.</p>\n",
	      fp);
	s = wl_page_data(fp, data, err);
	cJSON_Delete(data);
	if (s) {
		wl_afile_abort(af);
		return s;
	}
	wl_page_tail(fp, "report.js");
	return wl_afile_commit(af, err);
}
