/*
 * html.c: report.html, one self-contained page over a batch's output
 * folder: the sweep plots, a table of every run that sorts on any column
 * (a few lines of inline script), each run's path thumbnail and a link to
 * its folder, and the clips that failed with their messages.  Nothing is
 * loaded from the network; images are referenced relative to the page.
 * Also the run table's own bookkeeping (init, release, column lookup).
 */
#define _POSIX_C_SOURCE 200809L
#include "report/report.h"

#include <stdlib.h>
#include <string.h>

#include "core/afile.h"
#include "core/csvio.h"
#include "formats/summary.h"

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

static void esc(FILE *fp, const char *s)
{
	for (; s && *s; s++) {
		switch (*s) {
		case '&':
			fputs("&amp;", fp);
			break;
		case '<':
			fputs("&lt;", fp);
			break;
		case '>':
			fputs("&gt;", fp);
			break;
		case '"':
			fputs("&quot;", fp);
			break;
		case '\'':
			fputs("&#39;", fp);
			break;
		default:
			fputc(*s, fp);
		}
	}
}

/* A relative URL: each path segment percent-encoded where needed. */
static void url(FILE *fp, const char *s)
{
	for (; s && *s; s++) {
		unsigned char c = (unsigned char)*s;
		if ((c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') ||
		    strchr("-_.~/", c))
			fputc(c, fp);
		else
			fprintf(fp, "%%%02X", c);
	}
}

static const char CSS[] = "body{font-family:sans-serif;margin:1.5em;color:#222}"
                          "h1{font-size:1.4em}h2{font-size:1.15em;margin-top:1.6em}"
                          ".sweep img{max-width:48%;margin-right:1%;border:1px solid #ddd}"
                          "table{border-collapse:collapse;font-size:0.85em}"
                          "th,td{border:1px solid #ccc;padding:2px 6px;text-align:right;white-space:nowrap}"
                          "td.t,th.t{text-align:left}th{background:#eee;cursor:pointer;position:sticky;top:0}"
                          "th.asc::after{content:' \\25B2'}th.desc::after{content:' \\25BC'}"
                          "img.thumb{width:120px;height:auto;display:block}"
                          ".fail td{text-align:left}.msg{white-space:pre-wrap}"
                          "td.v-check{background:#ffe08a;font-weight:bold}"
                          "td.v-reject{background:#f4a3a3;font-weight:bold}"
                          "td.rej{color:#999;text-decoration:line-through}";

/* Sorting: numbers as numbers, empty cells last, text otherwise.  The load
 * handler records how many images loaded, for checks by a headless browser. */
static const char JS[] =
        "(function(){\n"
        "function key(td){var s=td.getAttribute('data-v');if(s===null)s=td.textContent;return s;}\n"
        "function cmp(a,b){if(a===''&&b==='')return 0;if(a==='')return 1;if(b==='')return -1;\n"
        " var x=Number(a),y=Number(b);if(!isNaN(x)&&!isNaN(y))return x-y;return a<b?-1:a>b?1:0;}\n"
        "var t=document.getElementById('runs');if(t){var hs=t.tHead.rows[0].cells;\n"
        " for(var i=0;i<hs.length;i++)(function(i){var h=hs[i];if(h.className.indexOf('nosort')>=0)return;\n"
        "  h.addEventListener('click',function(){var dir=h.classList.contains('asc')?-1:1;\n"
        "   for(var "
        "j=0;j<hs.length;j++)hs[j].classList.remove('asc','desc');h.classList.add(dir>0?'asc':'desc');\n"
        "   var b=t.tBodies[0],rs=Array.prototype.slice.call(b.rows);\n"
        "   rs.sort(function(p,q){var c=cmp(key(p.cells[i]),key(q.cells[i]));return "
        "c===0?0:(c<0?-dir:dir);});\n"
        "   rs.forEach(function(r){b.appendChild(r);});});})(i);\n"
        /* report.html#sort=COLUMN (or #sort=COLUMN,desc) opens the table sorted */
        " var m=/^#sort=([^,]+)(,desc)?$/.exec(decodeURIComponent(location.hash));\n"
        " if(m)for(var "
        "i2=0;i2<hs.length;i2++)if(hs[i2].textContent===m[1]){hs[i2].click();if(m[2])hs[i2].click();}}\n"
        "window.addEventListener('load',function(){var im=document.images,ok=0;\n"
        " for(var k=0;k<im.length;k++)if(im[k].complete&&im[k].naturalWidth>0)ok++;\n"
        " document.body.setAttribute('data-images-total',String(im.length));\n"
        " document.body.setAttribute('data-images-loaded',String(ok));});\n"
        "})();\n";

static int is_text_col(const wl_report_runs *t, size_t c)
{
	size_t i;
	double v;
	for (i = 0; i < t->nrows; i++) {
		const char *s = t->rows[i].cells[c];
		if (s[0] && !wl_parse_double(s, &v))
			return 1;
	}
	return 0;
}

wl_status wl_report_html(const wl_report_runs *t, const char *dir, const char *title, int with_sweep,
                         wl_err *err)
{
	char path[4200];
	wl_afile *af = NULL;
	FILE *fp;
	size_t i, j, nok = 0, nfail = 0;
	char *text = NULL;
	int cv, cr;
	wl_status s;

	snprintf(path, sizeof path, "%s/report.html", dir);
	if ((s = wl_afile_open(path, &af, err)))
		return s;
	fp = wl_afile_fp(af);
	text = calloc(t->ncols ? t->ncols : 1, 1);
	if (!text) {
		wl_afile_abort(af);
		return wl_err_set(err, WL_ENOMEM, "out of memory writing '%s'", path);
	}
	for (j = 0; j < t->ncols; j++)
		text[j] = (char)is_text_col(t, j);
	cv = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_VERDICT));
	cr = wl_report_runs_col(t, wl_summary_col_name(WL_SUMCOL_VERDICT_REASONS));
	for (i = 0; i < t->nrows; i++) {
		if (strcmp(t->rows[i].status, "ok") == 0)
			nok++;
		else
			nfail++;
	}
	fputs("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>", fp);
	esc(fp, title);
	fprintf(fp, "</title>\n<style>%s</style>\n</head>\n<body>\n<h1>", CSS);
	esc(fp, title);
	fprintf(fp, "</h1>\n<p id=\"counts\">%zu runs, %zu clips failed or missing.</p>\n", nok, nfail);
	if (with_sweep)
		fputs("<h2>Sweep</h2>\n<div class=\"sweep\">"
		      "<img src=\"sweep_curvature.svg\" alt=\"curvature against the sweep column\">"
		      "<img src=\"sweep_radius.svg\" alt=\"signed radius against the sweep column\"></div>\n",
		      fp);
	fputs("<h2>Runs</h2>\n<p>Click a column heading to sort (or open the page as "
	      "report.html#sort=COLUMN).</p>\n<table id=\"runs\">\n<thead><tr>"
	      "<th class=\"nosort t\">path</th><th class=\"t\">clip</th>",
	      fp);
	for (j = 0; j < t->ncols; j++) {
		fprintf(fp, "<th%s>", text[j] ? " class=\"t\"" : "");
		esc(fp, t->cols[j]);
		fputs("</th>", fp);
	}
	fputs("</tr></thead>\n<tbody>\n", fp);
	for (i = 0; i < t->nrows; i++) {
		const wl_report_row *r = &t->rows[i];
		const char *v = cv >= 0 ? r->cells[cv] : "";
		int reject = strcmp(v, "reject") == 0;
		if (strcmp(r->status, "ok") != 0)
			continue;
		fputs("<tr class=\"run\"><td class=\"t\"><a href=\"", fp);
		url(fp, r->folder);
		fputs("/\"><img class=\"thumb\" loading=\"eager\" src=\"", fp);
		url(fp, r->folder);
		fputs("/path_m.png\" alt=\"path\"></a></td><td class=\"t\"><a href=\"", fp);
		url(fp, r->folder);
		fputs("/\">", fp);
		esc(fp, r->clip);
		fputs("</a></td>", fp);
		for (j = 0; j < t->ncols; j++) {
			/* the verdict highlighted; a rejected run's numbers struck through */
			if ((int)j == cv && (reject || strcmp(v, "check") == 0))
				fprintf(fp, "<td class=\"t v-%s\">", v);
			else if ((int)j == cr && reject)
				fputs("<td class=\"t v-reject\">", fp);
			else if (reject && !text[j] && r->cells[j][0])
				fputs("<td class=\"rej\">", fp);
			else
				fprintf(fp, "<td%s>", text[j] ? " class=\"t\"" : "");
			esc(fp, r->cells[j]);
			fputs("</td>", fp);
		}
		fputs("</tr>\n", fp);
	}
	fputs("</tbody>\n</table>\n", fp);
	fprintf(fp, "<h2>Failures</h2>\n");
	if (!nfail) {
		fputs("<p id=\"nofailures\">None.</p>\n", fp);
	} else {
		fputs("<table id=\"failures\" "
		      "class=\"fail\">\n<thead><tr><th>clip</th><th>status</th><th>message</th>"
		      "</tr></thead>\n<tbody>\n",
		      fp);
		for (i = 0; i < t->nrows; i++) {
			const wl_report_row *r = &t->rows[i];
			if (strcmp(r->status, "ok") == 0)
				continue;
			fputs("<tr class=\"failure\"><td>", fp);
			esc(fp, r->clip);
			fputs("</td><td>", fp);
			esc(fp, r->status);
			fputs("</td><td class=\"msg\">", fp);
			esc(fp, r->error);
			fputs("</td></tr>\n", fp);
		}
		fputs("</tbody>\n</table>\n", fp);
	}
	fprintf(fp, "<script>\n%s</script>\n</body>\n</html>\n", JS);
	free(text);
	return wl_afile_commit(af, err);
}
