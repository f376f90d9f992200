/* fuzz_manifest.c: libFuzzer target for the batch manifest reader
 * (wl_manifest_load, src/batch/manifest.c) and the lookup on what it reads. */
#define _GNU_SOURCE
#include <stddef.h>
#include <stdint.h>

#include "batch/batch.h"
#include "fuzz_file.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	wl_manifest m;
	char path[64];
	wl_err err;
	int fd = fuzz_memfile(data, size, path, sizeof path);
	if (fd < 0)
		return 0;
	wl_manifest_init(&m);
	if (wl_manifest_load(path, &m, &err) == WL_OK && m.nrows > 0)
		(void)wl_manifest_find(&m, m.rows[m.nrows - 1].clip);
	wl_manifest_release(&m);
	close(fd);
	return 0;
}
