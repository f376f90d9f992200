/*
 * stageopts.h: the option groups that several commands share, as option
 * tables (cli.h): tracking (track, process, batch), cleaning (clean,
 * process, batch), measuring (measure, process, batch) and the robot size
 * that both clean and measure use.  One table per group, so that an option
 * is spelled, checked and explained the same way in every command.
 *
 * Usage: cli_stages_init, pass the wanted tables to cli_parse, then
 * cli_stages_finish, which loads --ids / --robots, applies --tank and the
 * robot size, and checks the combinations.
 */
#ifndef WL_CLI_STAGEOPTS_H
#define WL_CLI_STAGEOPTS_H

#include "cli/cli.h"
#include "pipeline/pipeline.h"

typedef struct {
	wl_process_opts p; /* what the options set */
	const char *ids, *robots;
	double body_m; /* --body-diameter-m, NaN when not given */
	double tank[4];
	int have_tank, margin_seen;
	int no_watch; /* --no-watch */
	cli_opt track[32], clean[24], measure[10], body[2];
} cli_stages;

/* Defaults, and the tables pointing into s (s must not move after this). */
void cli_stages_init(cli_stages *s);

/* After parsing: the robot size goes to the clean and measure options
 * (when given), --tank becomes the outline, --ids or --robots are loaded,
 * and the parameters are checked.  Returns CLI_CONTINUE, or an exit status
 * with the message printed. */
int cli_stages_finish(const char *cmd, cli_stages *s);

#endif
