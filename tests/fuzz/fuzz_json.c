/* fuzz_json.c: libFuzzer target for JSON loading and the typed getters. */
#include <stddef.h>
#include <stdint.h>

#include "core/jsonio.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	wl_err err;
	cJSON *j = NULL;
	double v[3];
	const char *s;
	if (wl_json_parse("fuzz.json", (const char *)data, size, &j, &err) == WL_OK) {
		(void)wl_json_number(j, "a", "fuzz.json", v, &err);
		(void)wl_json_numbers(j, "b", "fuzz.json", v, 3, &err);
		(void)wl_json_string(j, "c", "fuzz.json", &s, &err);
		cJSON_Delete(j);
	}
	return 0;
}
