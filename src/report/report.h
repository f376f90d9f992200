/*
 * report.h: the sixth stage's drawing side: a small plotting layer on cairo
 * (axes with ticks and units, lines, scatter, error bars, shaded bands,
 * legends, colour by time with a colour bar, linear and symmetric-log axes),
 * the per-run plots drawn from a clip's output folder, the sweep plots over
 * many clips, and the self-contained report.html.
 *
 * Pipeline position: after measure (reads CLEAN.csv and SUMMARY.json through
 * their readers in src/formats/), before the pipeline and batch (which call
 * it).
 *
 * Ownership: wl_plot_create returns a plot that wl_plot_destroy frees
 * (NULL is fine).  Every wl_plot_add_* copies the arrays it is given.
 * Functions that build a wl_report_runs table fill a struct that
 * wl_report_runs_release frees.
 *
 * Units: data coordinates are whatever the caller plots (the labels carry
 * the units, e.g. "x (m)"); figure sizes are in points (1/72 in), which are
 * also pixels in PNG output.
 *
 * Errors: only the functions that write files or read folders fail
 * (WL_EIO naming the file, WL_EFORMAT naming file and line, WL_ENOMEM).
 * All files are written atomically (core/afile.h).  Numbers in labels and
 * in report.html use '.' decimals whatever the locale.
 */
#ifndef WL_REPORT_H
#define WL_REPORT_H

#include <stddef.h>

#include "core/err.h"
#include "formats/cal.h"

/* ---- ticks, scales, colours (pure functions) ---------------------------- */

#define WL_TICKS_MAX 64

/* "Nice" tick positions (1, 2 or 5 times a power of ten apart, in the manner
 * of Heckbert's "Nice numbers for graph labels", Graphics Gems, 1990) that
 * lie within [lo, hi], at most max_ticks of them (>= 2), except that a short
 * range gets at least two ticks even if that takes more.  Writes at most cap
 * values to out and returns how many.  Ticks that are zero within rounding
 * are written as exactly 0. */
size_t wl_ticks_linear(double lo, double hi, size_t max_ticks, double *out, size_t cap);

/* Symmetric-log axis: linear within |v| <= linthresh, logarithmic outside,
 * continuous at the threshold.  The same transform as a base-10 symmetric
 * log with linscale 1:  |v| <= c: v * a;  else sign(v) * c * (a + log10(|v|/c)),
 * with a = 1 / (1 - 1/10).  linthresh must be > 0. */
double wl_symlog(double v, double linthresh);
double wl_symlog_inv(double s, double linthresh);

/* Ticks of a symmetric-log axis within [lo, hi]: 0 (when inside) and
 * +-linthresh * 10^k; decades are thinned so that at most max_ticks remain.
 * Falls back to linear ticks when the range does not leave the linear part. */
size_t wl_ticks_symlog(double lo, double hi, double linthresh, size_t max_ticks, double *out, size_t cap);

/* The viridis colour map (van der Walt & Smith, 2015, CC0) at t in [0, 1]
 * (clamped; NaN gives grey): rgb in [0, 1]. */
void wl_cmap_viridis(double t, double rgb[3]);

/* A qualitative palette for groups (Okabe & Ito, 2008, colour-blind safe):
 * colour i (wraps around after 8). */
void wl_palette(size_t i, double rgb[3]);

/* Label text of a tick: shortest of %g with up to 6 significant digits,
 * '.' decimals, no "-0".  buf holds at least 32 bytes. */
char *wl_tick_label(char *buf, double v);

/* ---- the plotting layer ----------------------------------------------- */

typedef struct wl_plot wl_plot;

typedef enum { WL_SCALE_LINEAR = 0, WL_SCALE_SYMLOG } wl_scale;

typedef enum {
	WL_MARK_NONE = 0,
	WL_MARK_CIRCLE,
	WL_MARK_SQUARE,
	WL_MARK_TRIANGLE,
	WL_MARK_CROSS, /* a '+' */
	WL_MARK_DIAMOND
} wl_mark;

typedef struct {
	double rgb[3];
	double alpha;    /* 0 is taken as 1 (opaque) */
	double width_pt; /* line width; 0 means 1.5 */
	int dashed;      /* 1: dashed line */
	wl_mark mark;    /* marker drawn at every point (scatter, error bars) */
	double mark_pt;  /* marker size; 0 means 6 */
	int fill;        /* markers and polygons: 1 filled, 0 outlined */
} wl_style;

/* A plot of one panel.  Returns NULL when out of memory. */
wl_plot *wl_plot_create(void);
void wl_plot_destroy(wl_plot *p);

void wl_plot_title(wl_plot *p, const char *title);
void wl_plot_xlabel(wl_plot *p, const char *label);
void wl_plot_ylabel(wl_plot *p, const char *label);
/* Scale of an axis; linthresh is used by WL_SCALE_SYMLOG only. */
void wl_plot_xscale(wl_plot *p, wl_scale s, double linthresh);
void wl_plot_yscale(wl_plot *p, wl_scale s, double linthresh);
/* Fixed axis limits (otherwise taken from the data with a 4 % margin). */
void wl_plot_xlim(wl_plot *p, double lo, double hi);
void wl_plot_ylim(wl_plot *p, double lo, double hi);
/* One data unit has the same length on both axes (maps, paths). */
void wl_plot_equal_aspect(wl_plot *p, int on);
/* Replaces the numeric x tick labels by names at positions 0, 1, ... n-1
 * (categorical axis).  The strings are copied. */
wl_status wl_plot_xcategories(wl_plot *p, const char *const *names, size_t n, wl_err *err);

/* Items, drawn in the order added.  `legend` may be NULL (no entry).
 * Points with a NaN coordinate are skipped (and break lines). */
wl_status wl_plot_add_line(wl_plot *p, const double *x, const double *y, size_t n, const wl_style *st,
                           const char *legend, wl_err *err);
wl_status wl_plot_add_scatter(wl_plot *p, const double *x, const double *y, size_t n, const wl_style *st,
                              const char *legend, wl_err *err);
/* Vertical error bars from lo[i] to hi[i] at x[i], with a marker at y[i]. */
wl_status wl_plot_add_errorbars(wl_plot *p, const double *x, const double *y, const double *lo,
                                const double *hi, size_t n, const wl_style *st, const char *legend,
                                wl_err *err);
/* A closed polygon (filled when st->fill). */
wl_status wl_plot_add_polygon(wl_plot *p, const double *x, const double *y, size_t n, const wl_style *st,
                              const char *legend, wl_err *err);
/* A shaded span across the whole plot: vertical = 1 shades x in [a, b]
 * (full height), 0 shades y in [a, b] (full width).  a or b may be
 * -INFINITY / INFINITY (to the edge).  Finite ends count for the limits. */
wl_status wl_plot_add_band(wl_plot *p, int vertical, double a, double b, const wl_style *st,
                           const char *legend, wl_err *err);
/* A line coloured point by point by c[i] through viridis, c mapped from
 * [cmin, cmax]; adds a colour bar titled cbar_label on the right. */
wl_status wl_plot_add_cline(wl_plot *p, const double *x, const double *y, const double *c, size_t n,
                            double cmin, double cmax, double width_pt, const char *cbar_label, wl_err *err);
/* A text at a data position (left-aligned, small). */
wl_status wl_plot_add_text(wl_plot *p, double x, double y, const char *text, const wl_style *st, wl_err *err);

/* The resolved axis limits and ticks (after auto-ranging and equal aspect)
 * for a panel of width_pt x height_pt; for tests and callers that align
 * panels.  Returns the number of ticks on each axis through nx, ny. */
void wl_plot_layout(const wl_plot *p, double width_pt, double height_pt, double xlim[2], double ylim[2],
                    double *xticks, size_t *nx, double *yticks, size_t *ny);

/* Draws panels stacked top to bottom into one figure of width_pt x height_pt
 * and writes it atomically to path: SVG when path ends in ".svg", PNG when
 * it ends in ".png" (one pixel per point), else WL_EINVAL. */
wl_status wl_plot_save(wl_plot *const *panels, size_t n, double width_pt, double height_pt, const char *path,
                       wl_err *err);

/* Frees cairo's process-wide caches (fonts).  Call once before a program
 * that drew plots exits, after all drawing, so that leak checkers see only
 * real leaks; drawing after it works but rebuilds the caches. */
void wl_report_release_caches(void);

/* ---- per-run plots ------------------------------------------------------ */

/* What the path plot draws besides the track.  Any field may be empty. */
typedef struct {
	size_t n_outline; /* tank outline polygon, floor metres */
	const double (*outline_m)[2];
	size_t n_markers; /* floor markers: centre and id */
	const double (*markers_m)[2];
	const char *const *marker_ids; /* labels (CAL.json's point ids), may be NULL */
	double body_diameter_m;        /* 0 if unknown */
} wl_report_scene;

/* A scene from CAL.json's tank outline and floor markers (formats/cal.h),
 * with the storage it points into.  wl_report_scene_load reads the file and
 * fills sb->scene; a missing or unreadable file gives an empty scene (the
 * plots do without) and returns the error for the caller to show or ignore.
 * wl_report_scene_from_calib builds it from parts already read (a loaded
 * calibration), so that a clip's CAL.json is read once.
 * wl_report_scene_release frees what they keep. */
typedef struct {
	wl_report_scene scene;
	double outline[WL_CAL_MAX_OUTLINE][2], markers[WL_CAL_MAX_POINTS][2];
	char idtext[WL_CAL_MAX_POINTS][32];
	const char *ids[WL_CAL_MAX_POINTS];
} wl_report_scene_buf;

wl_status wl_report_scene_load(const char *cal_path, wl_report_scene_buf *sb, wl_err *err);
wl_status wl_report_scene_from_calib(const wl_cal_outline *outline, const wl_calib_point *pts, int npts,
                                     wl_report_scene_buf *sb);
void wl_report_scene_release(wl_report_scene_buf *sb);

/* Reads `clip_dir`/clean.csv and `clip_dir`/summary.json (formats/clean.h,
 * formats/summary.h) and writes path_m.svg, path_m.png, heading.svg and
 * heading.png into clip_dir.  Memory stays bounded: long tracks are thinned
 * to at most WL_REPORT_MAX_POINTS points per robot for drawing.
 * The fitted circle is drawn for each non-straight run with a centre. */
#define WL_REPORT_MAX_POINTS 20000
wl_status wl_report_clip_plots(const char *clip_dir, const wl_report_scene *scene, wl_err *err);

/* ---- the sweep: a table of runs over many clips ------------------------- */

/* One row of summary.csv: a run (or a clip that failed / is missing, with
 * empty measures).  All strings are owned by the table. */
typedef struct {
	char *clip;   /* clip path relative to the batch folder */
	char *folder; /* its output folder relative to the report's folder */
	char *status; /* "ok", "failed", "missing" */
	char *error;  /* message for failed / missing, else "" */
	char **cells; /* ncols cells, "" where empty */
} wl_report_row;

typedef struct {
	size_t ncols;   /* parameter columns then measure columns */
	char **cols;    /* column names */
	size_t nparams; /* the first nparams columns are manifest parameters */
	size_t nrows;
	wl_report_row *rows;
	size_t cap;
} wl_report_runs;

void wl_report_runs_init(wl_report_runs *t);
void wl_report_runs_release(wl_report_runs *t);
/* Column index or -1. */
int wl_report_runs_col(const wl_report_runs *t, const char *name);

/* Options of the sweep plots. */
typedef struct {
	const char *x_col;      /* manifest column on the x axis (NULL: no sweep plot) */
	const char *group_col;  /* manifest column that groups the points (NULL: one group) */
	double body_diameter_m; /* 0: taken from the runs (|radius_m| / radius_body_diameters) */
} wl_report_sweep_opts;

/* Writes sweep_curvature.svg/.png and sweep_radius.svg/.png into dir from
 * the headline runs of t.  Does nothing (WL_OK, *written = 0) when no x column
 * is set or no run has a numeric curvature. */
wl_status wl_report_sweep_plots(const wl_report_runs *t, const wl_report_sweep_opts *o, const char *dir,
                                int *written, wl_err *err);

/* Writes dir/report.html: the sweep plots (when `with_sweep`), a table of
 * all runs sortable by any column, each run's thumbnail (folder/path_m.png)
 * and a link to its folder, and the failures with their messages.  The page
 * loads nothing from the network; images are referenced relatively. */
wl_status wl_report_html(const wl_report_runs *t, const char *dir, const char *title, int with_sweep,
                         wl_err *err);

#endif
