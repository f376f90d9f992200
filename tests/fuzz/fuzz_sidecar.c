/* fuzz_sidecar.c: libFuzzer target for the CLEAN.json sidecar reader and
 * CAL.json's shared parts (formats/clean.h, formats/cal.h): the same bytes
 * go to both. */
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>

#include "formats/cal.h"
#include "formats/clean.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	wl_clean_sidecar s;
	wl_cal_doc d;
	wl_cal_outline o;
	wl_calib_point *pts = malloc(WL_CAL_MAX_POINTS * sizeof *pts);
	wl_err err;
	int n;
	if (!pts)
		return 0;
	if (wl_clean_sidecar_parse("CLEAN.json", (const char *)data, size, &s, &err) == WL_OK)
		wl_clean_sidecar_release(&s);
	if (wl_cal_doc_parse("CAL.json", (const char *)data, size, &d, &err) == WL_OK) {
		(void)wl_cal_get_outline(&d, &o, &err);
		(void)wl_cal_get_points(&d, pts, WL_CAL_MAX_POINTS, &n, &err);
		wl_cal_doc_release(&d);
	}
	free(pts);
	return 0;
}
