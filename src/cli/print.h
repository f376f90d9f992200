/*
 * print.h: what the commands print on standard output about a stage's
 * result (print.c): the tracker's summary line, one line per robot of the
 * clean stage, the headline run of each robot of the measure stage.
 */
#ifndef WL_CLI_PRINT_H
#define WL_CLI_PRINT_H

#include "clean/clean.h"
#include "formats/summary.h"
#include "track/track.h"

void cli_print_track(const char *raw_path, const wl_track_summary *sum);
void cli_print_clean_robot(const wl_clean_robot *rb);
void cli_print_headline(const wl_summary_run *run);

#endif
