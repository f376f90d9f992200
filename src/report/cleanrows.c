/*
 * cleanrows.c: CLEAN.csv's columns for the report's readers (cleanrows.h).
 */
#include "report/cleanrows.h"

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
