/*
 * page.c: the parts every report page shares (see page.h).
 */
#define _POSIX_C_SOURCE 200809L
#include "report/page.h"

#include <stdlib.h>
#include <string.h>

#include "report/assets.h"

void wl_page_esc(FILE *fp, const char *s)
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

void wl_page_url(FILE *fp, const char *s)
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

void wl_page_head(FILE *fp, const char *title)
{
	fputs("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
	      "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
	      /* no request leaves the page: inline scripts and styles, images
	       * beside the page or embedded */
	      "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
	      "script-src 'unsafe-inline'; style-src 'unsafe-inline'; img-src 'self' data:; "
	      "base-uri 'none'; form-action 'none'\">\n"
	      "<link rel=\"icon\" href=\"data:,\">\n<title>",
	      fp);
	wl_page_esc(fp, title);
	fprintf(fp, "</title>\n<style>\n%s</style>\n</head>\n<body>\n", wl_report_asset("page.css"));
}

wl_status wl_page_data(FILE *fp, const cJSON *root, wl_err *err)
{
	char *text = cJSON_PrintUnformatted(root), *p;
	if (!text)
		return wl_err_set(err, WL_ENOMEM, "out of memory printing a report page's data");
	fputs("<script type=\"application/json\" id=\"wl-data\">", fp);
	for (p = text; *p; p++) {
		if (*p == '<')
			fputs("\\u003c", fp);
		else
			fputc(*p, fp);
	}
	fputs("</script>\n", fp);
	free(text);
	return WL_OK;
}

void wl_page_tail(FILE *fp, const char *script)
{
	fprintf(fp, "<script>\n%s</script>\n<script>\n%s</script>\n</body>\n</html>\n",
	        wl_report_asset("common.js"), wl_report_asset(script));
}
