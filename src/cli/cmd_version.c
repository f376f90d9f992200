/* cmd_version.c: `wakeline version`: the tool's version. */
#include <stdio.h>
#include <string.h>

#include "cli/cli.h"
#include "wl_version.h"

const char cmd_version_summary[] = "print the version";

int cmd_version(int argc, char **argv)
{
	if (argc > 1 && (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0)) {
		printf("usage: wakeline version\n\nPrints the version and the source revision.\n");
		return WL_EXIT_OK;
	}
	if (argc > 1)
		return cli_usage_error("version", "takes no arguments");
	printf("wakeline %s (%s)\n", WL_VERSION, WL_VERSION_GIT);
	return WL_EXIT_OK;
}
