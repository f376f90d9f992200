/*
 * readers.c: what the report's readers share (readers.h).
 */
#include "report/readers.h"

#include <math.h>
#include <stdio.h>

wl_status wl_clean_cols_read(const wl_csv_row *header, const char *const *required, wl_clean_cols *c,
                             wl_err *err)
{
	if (wl_csv_require(header, required, err))
		return wl_err_prefix(err, "%s:%ld", header->path, header->line);
	c->t = wl_csv_col(header, "t_s");
	c->id = wl_csv_col(header, "id");
	c->x = wl_csv_col(header, "x_m");
	c->y = wl_csv_col(header, "y_m");
	c->h = wl_csv_col(header, "heading_rad");
	c->v = wl_csv_col(header, "speed_mps");
	c->yr = wl_csv_col(header, "yaw_rate_radps");
	c->seg = wl_csv_col(header, "segment");
	c->st = wl_csv_col(header, "status");
	return WL_OK;
}

const char *wl_clean_cols_id(const wl_csv_row *row, const wl_clean_cols *c, wl_err *err)
{
	if (c->id < 0 || (size_t)c->id >= row->nfields) {
		wl_err_set(err, WL_EFORMAT, "%s:%ld: row has no 'id' cell: check the file", row->path,
		           row->line);
		return NULL;
	}
	return row->fields[c->id];
}

void wl_summary_id_text(const cJSON *v, char *buf, size_t cap)
{
	char num[WL_NUMBUF];
	if (cJSON_IsString(v))
		snprintf(buf, cap, "%s", v->valuestring);
	else if (cJSON_IsNumber(v))
		snprintf(buf, cap, "%s", wl_fmt_g(num, v->valuedouble, 12));
	else
		buf[0] = '\0';
}

double wl_summary_num(const cJSON *o, const char *k)
{
	const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, k);
	return cJSON_IsNumber(v) ? v->valuedouble : NAN;
}
