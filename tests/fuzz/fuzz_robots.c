/* fuzz_robots.c: libFuzzer target for the tracker's ROBOTS.csv loader
 * (wl_track_load_robots, src/track) and its id-list parser. */
#define _GNU_SOURCE
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include "fuzz_file.h"
#include "track/track.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	static wl_track_opts o;
	char path[64], ids[256];
	wl_err err;
	int fd = fuzz_memfile(data, size, path, sizeof path);
	if (fd < 0)
		return 0;
	wl_track_opts_init(&o);
	(void)wl_track_load_robots(path, &o, &err);
	close(fd);
	/* the same bytes as a --ids list */
	wl_track_opts_init(&o);
	memcpy(ids, data, size < sizeof ids - 1 ? size : sizeof ids - 1);
	ids[size < sizeof ids - 1 ? size : sizeof ids - 1] = '\0';
	(void)wl_track_parse_ids(ids, &o, &err);
	return 0;
}
