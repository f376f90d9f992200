/* fuzz_calib.c: libFuzzer target for the CAL.json loader (wl_calib_load,
 * src/calib/calfile.c) and a pixel mapping through what it accepts. */
#define _GNU_SOURCE
#include <stddef.h>
#include <stdint.h>

#include "calib/calib.h"
#include "fuzz_file.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	static wl_calib cal;
	char path[64];
	wl_err err;
	int fd = fuzz_memfile(data, size, path, sizeof path);
	if (fd < 0)
		return 0;
	if (wl_calib_load(path, &cal, &err) == WL_OK) {
		double x, y;
		(void)wl_calib_pixel_to_plane(&cal, 10, 20, cal.plane_height_m, &x, &y);
		(void)wl_calib_camera_height_m(&cal);
		wl_calib_release(&cal);
	}
	close(fd);
	return 0;
}
