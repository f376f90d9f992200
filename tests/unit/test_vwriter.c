/*
 * test_vwriter.c: the H.264/MP4 writer.  Frame times and the stored
 * rotation are read back with Debian's ffprobe (FFmpeg 5.1), the reference
 * named in tests/data/references.md "Video timestamps"; error paths leave no file.
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <dirent.h>
#include <unistd.h>

#include <cmocka.h>

#include "decode/vwriter.h"

static char dir[256];

static int setup(void **state)
{
	char cmd[300];
	(void)state;
	snprintf(dir, sizeof dir, "/tmp/wl-test-vwriter-%ld", (long)getpid());
	snprintf(cmd, sizeof cmd, "mkdir -p '%s'", dir);
	return system(cmd) == 0 ? 0 : -1;
}

static int teardown(void **state)
{
	char cmd[300];
	(void)state;
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
	return system(cmd) == 0 ? 0 : -1;
}

/* Number of entries in dir other than . and .. */
static int dir_entries(void)
{
	DIR *d = opendir(dir);
	struct dirent *e;
	int n = 0;
	assert_non_null(d);
	while ((e = readdir(d)))
		if (strcmp(e->d_name, ".") && strcmp(e->d_name, ".."))
			n++;
	closedir(d);
	return n;
}

static void fill(uint8_t *rgb, int w, int h, int k)
{
	for (int y = 0; y < h; y++)
		for (int x = 0; x < w; x++) {
			uint8_t *p = rgb + ((size_t)y * w + x) * 3;
			p[0] = (uint8_t)(x + 3 * k);
			p[1] = (uint8_t)(y + k);
			p[2] = (uint8_t)((x ^ y) + k);
		}
}

/* Variable frame times with B-frames: ffprobe's pts_time = the times given. */
static void test_vfr_times_and_rotation(void **state)
{
	static const double t[] = {0, 0.040, 0.080, 0.125, 0.141, 0.300, 0.301, 0.402, 0.999, 1.0005};
	const int n = (int)(sizeof t / sizeof t[0]), w = 160, h = 120;
	wl_vwriter_opts o = {.width_px = w,
	                     .height_px = h,
	                     .time_base_den = 10000,
	                     .nominal_fps = 25,
	                     .rotation_deg = 90,
	                     .crf = 23,
	                     .b_frames = 3,
	                     .threads = 1};
	wl_vwriter *vw = NULL;
	wl_err err = {0};
	uint8_t *rgb = malloc((size_t)w * h * 3);
	char path[300], cmd[700], line[128];
	FILE *fp;
	int i = 0;
	(void)state;
	snprintf(path, sizeof path, "%s/vfr.mp4", dir);
	assert_int_equal(wl_vwriter_open(path, &o, &vw, &err), WL_OK);
	for (int k = 0; k < n; k++) {
		fill(rgb, w, h, k);
		assert_int_equal(wl_vwriter_put_rgb(vw, rgb, 3 * w, t[k], &err), WL_OK);
	}
	assert_int_equal(access(path, F_OK), -1); /* not there before close */
	assert_int_equal(wl_vwriter_close(vw, &err), WL_OK);
	snprintf(cmd, sizeof cmd,
	         "ffprobe -v error -select_streams v:0 -show_entries frame=pts_time -of default=nw=1:nk=1 "
	         "'%s'",
	         path);
	fp = popen(cmd, "r");
	assert_non_null(fp);
	while (fgets(line, sizeof line, fp)) {
		assert_true(i < n);
		assert_float_equal(atof(line), t[i], 1e-6);
		i++;
	}
	assert_int_equal(pclose(fp), 0);
	assert_int_equal(i, n);
	/* tests/data/references.md: the display matrix of `rotate=90` reads back as 90 */
	snprintf(cmd, sizeof cmd,
	         "ffprobe -v error -select_streams v:0 -show_entries stream_side_data=rotation -of "
	         "default=nw=1:nk=1 '%s'",
	         path);
	fp = popen(cmd, "r");
	assert_non_null(fp);
	assert_non_null(fgets(line, sizeof line, fp));
	assert_int_equal(atoi(line), 90);
	pclose(fp);
	assert_int_equal(dir_entries(), 1); /* no temporary file left */
	unlink(path);
	free(rgb);
}

static void test_errors_leave_nothing(void **state)
{
	wl_vwriter_opts o = {.width_px = 64, .height_px = 48, .time_base_den = 1000, .nominal_fps = 30};
	wl_vwriter *vw = NULL;
	wl_err err = {0};
	uint8_t rgb[64 * 48 * 3] = {0};
	char path[300];
	(void)state;
	snprintf(path, sizeof path, "%s/bad.mp4", dir);
	/* odd size */
	o.width_px = 63;
	assert_int_equal(wl_vwriter_open(path, &o, &vw, &err), WL_EINVAL);
	assert_non_null(strstr(err.msg, "even"));
	o.width_px = 64;
	/* rotation not a multiple of 90 */
	o.rotation_deg = 45;
	assert_int_equal(wl_vwriter_open(path, &o, &vw, &err), WL_EINVAL);
	o.rotation_deg = 0;
	/* a folder that does not exist */
	assert_int_not_equal(wl_vwriter_open("/nonexistent-dir/x.mp4", &o, &vw, &err), WL_OK);
	assert_non_null(strstr(err.msg, "/nonexistent-dir/x.mp4"));
	/* times must increase (also after rounding to the time base) */
	assert_int_equal(wl_vwriter_open(path, &o, &vw, &err), WL_OK);
	assert_int_equal(wl_vwriter_put_rgb(vw, rgb, 64 * 3, 0.0, &err), WL_OK);
	assert_int_equal(wl_vwriter_put_rgb(vw, rgb, 64 * 3, 0.0004, &err), WL_EINVAL);
	assert_non_null(strstr(err.msg, "frame 1"));
	assert_int_equal(wl_vwriter_put_rgb(vw, rgb, 64 * 3, NAN, &err), WL_EINVAL);
	wl_vwriter_abort(vw);
	assert_int_equal(dir_entries(), 0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
	        cmocka_unit_test(test_vfr_times_and_rotation),
	        cmocka_unit_test(test_errors_leave_nothing),
	};
	return cmocka_run_group_tests(tests, setup, teardown);
}
