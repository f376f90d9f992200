/* fuzz_points.c: libFuzzer target for the POINTS.csv reader (src/calib)
 * and the homography point checks run on what it reads. */
#define _GNU_SOURCE
#include <stddef.h>
#include <stdint.h>

#include "calib/calib.h"
#include "fuzz_file.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	static wl_calib_point pts[WL_CALIB_MAX_POINTS];
	static double uv[2 * WL_CALIB_MAX_POINTS];
	char path[64];
	wl_err err;
	int n = 0, fd = fuzz_memfile(data, size, path, sizeof path);
	if (fd < 0)
		return 0;
	if (wl_calib_read_points(path, pts, WL_CALIB_MAX_POINTS, &n, &err) == WL_OK) {
		for (int i = 0; i < n; i++) {
			uv[2 * i] = pts[i].u_px;
			uv[2 * i + 1] = pts[i].v_px;
		}
		(void)wl_homography_check_points(uv, n, "points", &err);
	}
	close(fd);
	return 0;
}
