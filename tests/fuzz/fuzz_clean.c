/* fuzz_clean.c: libFuzzer target for the CLEAN.csv reader of the measure
 * stage.  That reader is part of the command (src/cli/cmd_measure.c, which
 * streams the file one segment at a time), so the target includes the
 * command's source and runs `measure FILE -o OUT -q` on a memfd, with the
 * CLI helpers of src/cli/cli.c replaced by silent ones (the real cli_finish
 * closes stdout).  The summary goes to a scratch file in /dev/shm. */
#define _GNU_SOURCE
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <unistd.h>

#include "../../src/cli/cmd_measure.c"
#include "fuzz_file.h"

int cli_fail(const char *cmd, const wl_err *err)
{
	(void)cmd;
	(void)err;
	return WL_EXIT_FAIL;
}

int cli_usage_error(const char *cmd, const char *fmt, ...)
{
	(void)cmd;
	(void)fmt;
	return WL_EXIT_USAGE;
}

void cli_warn(const char *cmd, const char *fmt, ...)
{
	(void)cmd;
	(void)fmt;
}

int cli_parse_double(const char *s, double *out)
{
	return wl_parse_double(s, out);
}

int cli_finish(const char *cmd, int status)
{
	(void)cmd;
	return status;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	char path[64], out[64], csv[64];
	char *argv[8];
	int fd = fuzz_memfile(data, size, path, sizeof path);
	if (fd < 0)
		return 0;
	snprintf(out, sizeof out, "/dev/shm/wl-fuzz-measure-%d.json", (int)getpid());
	snprintf(csv, sizeof csv, "/dev/shm/wl-fuzz-measure-%d.csv", (int)getpid());
	argv[0] = "measure";
	argv[1] = path;
	argv[2] = "-o";
	argv[3] = out;
	argv[4] = "--csv";
	argv[5] = csv;
	argv[6] = "-q";
	argv[7] = NULL;
	(void)cmd_measure(7, argv);
	close(fd);
	unlink(out);
	unlink(csv);
	return 0;
}
