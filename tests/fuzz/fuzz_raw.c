/* fuzz_raw.c: libFuzzer target for the RAW.csv reader and the clean stage
 * on whatever it accepts (small inputs: the whole stage runs). */
#include <stddef.h>
#include <stdint.h>

#include "clean/clean.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	wl_err err;
	wl_clean_raw *raw = NULL;
	wl_clean_params p;
	wl_clean_result res;
	if (size > 20000)
		return 0;
	if (wl_clean_raw_read_mem("RAW.csv", (const char *)data, size, &raw, &err) != WL_OK)
		return 0;
	wl_clean_params_init(&p);
	(void)wl_clean_run(raw, &p, NULL, &res, &err);
	wl_clean_result_release(&res);
	wl_clean_raw_destroy(raw);
	return 0;
}
