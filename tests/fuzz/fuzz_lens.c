/* fuzz_lens.c: libFuzzer target for the LENS.json loader (wl_lens_load,
 * src/calib/lens.c). */
#define _GNU_SOURCE
#include <stddef.h>
#include <stdint.h>

#include "calib/lens.h"
#include "fuzz_file.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	static wl_lens lens;
	char path[64];
	wl_err err;
	int fd = fuzz_memfile(data, size, path, sizeof path);
	if (fd < 0)
		return 0;
	(void)wl_lens_load(path, &lens, &err);
	close(fd);
	return 0;
}
