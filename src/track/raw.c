/*
 * raw.c: RAW.csv, the tracker's output (DEVELOPERS.md, "File formats"):
 * t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status,margin,size_px,heading_source,
 * hold_score,t_detect_s written row by row (streaming) into an atomic file.
 * status: ok (detected), held (refined against the image where the detector
 * missed; hold_score its quality), lost (pose cells empty).
 */
#include "track/track.h"

#include <math.h>
#include <stdlib.h>

#include "core/afile.h"
#include "core/csvio.h"

struct wl_raw_writer {
	wl_afile *af;
	wl_csv_writer w;
};

wl_status wl_raw_open(const char *path, wl_raw_writer **out, wl_err *err)
{
	static const char *const hdr[] = {"t_s",        "frame",      "id",      "u_px",
	                                  "v_px",       "x_m",        "y_m",     "heading_rad",
	                                  "status",     "margin",     "size_px", "heading_source",
	                                  "hold_score", "t_detect_s", NULL};
	wl_raw_writer *w = calloc(1, sizeof *w);
	wl_status st;
	*out = NULL;
	if (!w)
		return wl_err_set(err, WL_ENOMEM, "out of memory opening '%s'", path);
	if ((st = wl_afile_open(path, &w->af, err)) != WL_OK) {
		free(w);
		return st;
	}
	wl_csvw_init(&w->w, wl_afile_fp(w->af));
	wl_csvw_header(&w->w, hdr);
	*out = w;
	return WL_OK;
}

void wl_raw_put(wl_raw_writer *w, double t_s, int64_t frame, const wl_track_obs *obs, int n)
{
	for (int i = 0; i < n; i++) {
		const wl_track_obs *o = &obs[i];
		wl_csvw_num(&w->w, t_s, 6);
		wl_csvw_int(&w->w, (long long)frame);
		wl_csvw_int(&w->w, o->id);
		if (o->ok) {
			wl_csvw_num(&w->w, o->u_px, 3);
			wl_csvw_num(&w->w, o->v_px, 3);
			wl_csvw_num(&w->w, o->x_m, 6);
			wl_csvw_num(&w->w, o->y_m, 6);
			wl_csvw_num(&w->w, o->heading_rad, 6); /* NaN -> empty */
			wl_csvw_str(&w->w, o->held ? "held" : "ok");
			wl_csvw_num(&w->w, o->margin, 2);
			wl_csvw_num(&w->w, o->size_px, 2);
			wl_csvw_str(&w->w,
			            isnan(o->heading_rad) ? "" : wl_heading_source_name(o->heading_source));
			if (o->held)
				wl_csvw_num(&w->w, o->hold_score, 3);
			else
				wl_csvw_empty(&w->w);
			wl_csvw_num(&w->w, isnan(o->t_detect_s) ? t_s : o->t_detect_s, 6);
		} else {
			for (int k = 0; k < 5; k++)
				wl_csvw_empty(&w->w);
			wl_csvw_str(&w->w, "lost");
			for (int k = 0; k < 5; k++)
				wl_csvw_empty(&w->w);
		}
		wl_csvw_end(&w->w);
	}
}

wl_status wl_raw_commit(wl_raw_writer *w, wl_err *err)
{
	wl_status st;
	if (!w)
		return WL_OK;
	st = wl_afile_commit(w->af, err);
	free(w);
	return st;
}

void wl_raw_abort(wl_raw_writer *w)
{
	if (!w)
		return;
	wl_afile_abort(w->af);
	free(w);
}
