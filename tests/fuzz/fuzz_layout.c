/* fuzz_layout.c: libFuzzer target for the marker layout reader (LAYOUT.csv,
 * src/calib/points.c) and the corner geometry it feeds. */
#define _GNU_SOURCE
#include <stddef.h>
#include <stdint.h>

#include "calib/calib.h"
#include "fuzz_file.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	static wl_calib_marker marks[64];
	char path[64];
	wl_err err;
	int n = 0, fd = fuzz_memfile(data, size, path, sizeof path);
	if (fd < 0)
		return 0;
	if (wl_calib_read_layout(path, marks, 64, &n, &err) == WL_OK) {
		double xy[4][2];
		for (int i = 0; i < n; i++)
			wl_calib_marker_corners(&marks[i], xy);
	}
	close(fd);
	return 0;
}
