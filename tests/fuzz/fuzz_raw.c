/* fuzz_raw.c: libFuzzer target for the RAW.csv reader of the clean stage
 * (wl_raw_read_mem, src/clean/raw.c), then one clean run on what it accepts. */
#include <stddef.h>
#include <stdint.h>

#include "clean/clean.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	wl_raw *raw = NULL;
	wl_err err;
	if (wl_raw_read_mem("fuzz.csv", (const char *)data, size, &raw, &err) == WL_OK) {
		wl_clean_params p;
		wl_clean_result res;
		wl_clean_params_init(&p);
		if (wl_clean_run(raw, &p, &res, &err) == WL_OK)
			wl_clean_result_release(&res);
	}
	wl_raw_destroy(raw);
	return 0;
}
