/* opt.c: option tables for the commands (see cli.h, cli_parse). */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"

#define MAX_OPTS 128

typedef struct {
	const cli_opt *o;
	int is_alias;
} entry;

/* "  -o, --output FILE" padded to the help column. */
static void help_line(FILE *fp, const cli_opt *o)
{
	char left[96];
	const char *h, *nl;
	int n;
	if (o->letter || strlen(o->name) == 1)
		n = snprintf(left, sizeof left, "  -%c, --%s%s%s", o->letter ? o->letter : o->name[0],
		             o->name, o->arg ? " " : "", o->arg ? o->arg : "");
	else
		n = snprintf(left, sizeof left, "      --%s%s%s", o->name, o->arg ? " " : "",
		             o->arg ? o->arg : "");
	fputs(left, fp);
	if (n >= 29) {
		fputc('\n', fp);
		n = 0;
	}
	fprintf(fp, "%*s", 30 - n, "");
	for (h = o->help; (nl = strchr(h, '\n')); h = nl + 1)
		fprintf(fp, "%.*s\n%30s", (int)(nl - h), h, "");
	fprintf(fp, "%s\n", h);
	if (o->alias)
		fprintf(fp, "%30s(--%s is the old spelling: accepted until the next release)\n", "",
		        o->alias);
}

static void usage(const char *head, const char *tail, const cli_opt *const *tables)
{
	fputs(head, stdout);
	for (size_t t = 0; tables[t]; t++)
		for (const cli_opt *o = tables[t]; o->kind != CLI_END; o++) {
			if (o->kind == CLI_SECTION)
				printf("\n%s\n", o->help);
			else if (o->help)
				help_line(stdout, o);
		}
	printf("  -h, --help                  this text\n");
	if (tail)
		fputs(tail, stdout);
}

/* "--name 'arg': give ..." for a value out of range. */
static int range_error(const char *cmd, const char *name, const char *arg, const cli_opt *o, int whole)
{
	const char *what = whole ? "a whole number" : "a number";
	if (!(o->hi > o->lo))
		return cli_usage_error(cmd, "--%s '%s': give %s", name, arg, what);
	if (o->above_lo && isinf(o->hi))
		return cli_usage_error(cmd, "--%s '%s': give %s above %g", name, arg, what, o->lo);
	return cli_usage_error(cmd, "--%s '%s': give %s from %g%s to %g", name, arg, what, o->lo,
	                       o->above_lo ? " (not included)" : "", o->hi);
}

static int in_range(const cli_opt *o, double v)
{
	if (!isfinite(v))
		return 0;
	if (!(o->hi > o->lo))
		return 1;
	return (o->above_lo ? v > o->lo : v >= o->lo) && v <= o->hi;
}

static int take(const char *cmd, const cli_opt *o, const char *name, const char *arg)
{
	char msg[256];
	double v;
	int i;
	if (o->seen)
		*o->seen = 1;
	switch (o->kind) {
	case CLI_FLAG:
		*(int *)o->dest = 1;
		return 0;
	case CLI_STR:
		*(const char **)o->dest = arg;
		return 0;
	case CLI_DOUBLE:
		if (!cli_parse_double(arg, &v) || !in_range(o, v))
			return range_error(cmd, name, arg, o, 0);
		*(double *)o->dest = v;
		return 0;
	case CLI_INT:
		if (!cli_parse_int(arg, &i) || !in_range(o, i))
			return range_error(cmd, name, arg, o, 1);
		*(int *)o->dest = i;
		return 0;
	case CLI_FLOAT:
		if (!cli_parse_double(arg, &v) || !in_range(o, v))
			return range_error(cmd, name, arg, o, 0);
		*(float *)o->dest = (float)v;
		return 0;
	case CLI_FN:
		msg[0] = '\0';
		if (o->fn(arg, o->dest, msg, sizeof msg))
			return cli_usage_error(cmd, "--%s '%s': %s", name, arg,
			                       msg[0] ? msg : "not a valid value");
		return 0;
	default:
		return 0;
	}
}

int cli_parse(const char *cmd, const char *head, const char *tail, const cli_opt *const *tables, int argc,
              char **argv, int *first)
{
	struct option lo[2 * MAX_OPTS + 2];
	entry ent[2 * MAX_OPTS];
	char shorts[3 * MAX_OPTS + 4] = ":h";
	size_t n = 0, nent, ns = 2;
	int c, idx;
	for (size_t t = 0; tables[t]; t++)
		for (const cli_opt *o = tables[t]; o->kind != CLI_END; o++) {
			int has_arg = o->kind == CLI_FLAG ? no_argument : required_argument;
			char letter;
			if (o->kind == CLI_SECTION || n + 2 > 2 * MAX_OPTS)
				continue;
			letter = o->letter;
			for (int k = 0; k < 1 + (o->alias != NULL); k++) {
				lo[n] = (struct option){k ? o->alias : o->name, has_arg, NULL, 256 + (int)n};
				ent[n] = (entry){o, k};
				n++;
			}
			if (letter && ns + 3 < sizeof shorts) {
				shorts[ns++] = letter;
				if (has_arg == required_argument)
					shorts[ns++] = ':';
				shorts[ns] = '\0';
			}
		}
	nent = n;
	lo[n++] = (struct option){"help", no_argument, NULL, 'h'};
	lo[n] = (struct option){NULL, 0, NULL, 0};
	optind = 1;
	opterr = 0;
	while ((c = getopt_long(argc, argv, shorts, lo, &idx)) != -1) {
		const cli_opt *o = NULL;
		const char *name = NULL;
		int rc;
		if (c == 'h') {
			usage(head, tail, tables);
			return cli_finish(cmd, WL_EXIT_OK);
		}
		if (c == ':')
			return cli_usage_error(cmd, "option '%s' needs a value", argv[optind - 1]);
		if (c == '?')
			return cli_usage_error(cmd, "unknown option '%s'",
			                       optopt ? (char[3]){'-', (char)optopt, 0} : argv[optind - 1]);
		if (c >= 256) {
			o = ent[c - 256].o;
			name = ent[c - 256].is_alias ? o->alias : o->name;
		} else {
			for (size_t i = 0; i < nent && !o; i++)
				if (ent[i].o->letter == c ||
				    (ent[i].o->name[0] == c && ent[i].o->name[1] == '\0'))
					o = ent[i].o;
			name = o ? o->name : "?";
		}
		if (!o)
			return cli_usage_error(cmd, "unknown option");
		if ((rc = take(cmd, o, name, optarg)))
			return rc;
	}
	*first = optind;
	return CLI_CONTINUE;
}
