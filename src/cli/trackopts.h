/*
 * trackopts.h: the tracker's options (wl_track_opts) as the commands that
 * track take them: `wakeline track` and `wakeline live` share one option
 * table, one parser and one usage text, so that a tracking option means the
 * same in both.
 *
 * Use: append cli_track_longopts to the command's own getopt_long table
 * (cli_track_merge), pass every option code >= CLI_TRACK_OPT_BASE to
 * cli_track_option, and call cli_track_finish after the loop.
 */
#ifndef WL_CLI_TRACKOPTS_H
#define WL_CLI_TRACKOPTS_H

#include <getopt.h>

#include "track/track.h"

#define CLI_TRACK_OPT_BASE 1000

/* The options (without the NULL terminator) and how many. */
extern const struct option cli_track_longopts[];
extern const int cli_track_nlongopts;

/* The options' lines for a usage text (two leading spaces, one per line). */
extern const char cli_track_usage[];

/* What the options collect besides wl_track_opts. */
typedef struct {
	const char *ids, *robots;
	int margin_set;
} cli_track_extra;

/* Copies own (NULL-terminated) and then the tracker's options into out
 * (room for n_own + cli_track_nlongopts + 1), NULL-terminated. */
void cli_track_merge(const struct option *own, struct option *out);

/* Handles a tracker option: 0 when taken, WL_EXIT_USAGE after a usage
 * error (printed, naming cmd). */
int cli_track_option(const char *cmd, int c, const char *arg, wl_track_opts *o, cli_track_extra *x);

/* After parsing: --ids/--robots (loaded into o) and the margin rule.
 * Returns 0, WL_EXIT_USAGE or WL_EXIT_FAIL (message printed). */
int cli_track_finish(const char *cmd, wl_track_opts *o, cli_track_extra *x);

#endif
