/* fuzz_scene.c: libFuzzer target for the synthetic scene parser
 * (wl_synth_parse, src/synth/scene.c) and the frame-time functions on the
 * scenes it accepts. */
#include <stddef.h>
#include <stdint.h>

#include "synth/synth.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	static wl_synth_scene sc;
	wl_err err;
	if (wl_synth_parse("fuzz.json", (const char *)data, size, &sc, &err) == WL_OK) {
		long n = wl_synth_frame_count(&sc);
		wl_synth_pose p;
		if (n > 0) {
			(void)wl_synth_frame_pts(&sc, n - 1);
			(void)wl_synth_frame_time(&sc, n - 1);
		}
		for (int r = 0; r < sc.n_robots; r++)
			wl_synth_robot_pose(&sc, r, 0.5, &p);
	}
	return 0;
}
