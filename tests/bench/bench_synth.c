/* bench_synth.c: renderer speed (background once, then frames without
 * encoding) for tests/bench/synth-bench.sh.  Prints figures; not a test. */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "synth/synth.h"

static double now_s(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static double cpu_s(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

int main(int argc, char **argv)
{
	wl_synth_scene sc;
	wl_synth_renderer *r = NULL;
	wl_err err = {0};
	long n = argc > 2 ? atol(argv[2]) : 100;
	if (argc < 2 || wl_synth_load(argv[1], &sc, &err)) {
		fprintf(stderr, "usage: bench_synth SCENE.json [frames]\n%s\n", err.msg);
		return 1;
	}
	int w = sc.cam.width_px, h = sc.cam.height_px;
	uint8_t *rgb = malloc((size_t)w * h * 3);
	double t0 = now_s(), c0 = cpu_s();
	if (wl_synth_renderer_create(&sc, 2, &r, &err)) {
		fprintf(stderr, "%s\n", err.msg);
		return 1;
	}
	double t1 = now_s(), c1 = cpu_s();
	for (long k = 0; k < n; k++)
		wl_synth_render_frame(r, k % wl_synth_frame_count(&sc), rgb, 3 * w, &err);
	double t2 = now_s(), c2 = cpu_s();
	printf("%dx%d ss=%d noise=%g: background %.2f s wall (%.2f s cpu); frames %.1f/s wall (%.1f/s per "
	       "cpu-s) without encoding\n",
	       w, h, sc.supersample, sc.noise_sigma, t1 - t0, c1 - c0, n / (t2 - t1), n / (c2 - c1));
	wl_synth_renderer_destroy(r);
	free(rgb);
	return 0;
}
