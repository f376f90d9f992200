/* fuzz_csv.c: libFuzzer target for the CSV reader and its number parsing. */
#include <stddef.h>
#include <stdint.h>

#include "core/csvio.h"

static wl_status visit(const wl_csv_row *row, void *ctx, wl_err *err)
{
	(void)ctx;
	for (size_t i = 0; i < row->nfields; i++) {
		double d;
		long l;
		if (wl_csv_get_double(row, (int)i, "c", &d, err) != WL_OK)
			(void)wl_csv_get_long(row, (int)i, "c", &l, err);
	}
	return wl_csv_col(row, "t_s") > 5 ? WL_EFORMAT : WL_OK;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	wl_err err;
	(void)wl_csv_read_mem("fuzz.csv", (const char *)data, size, visit, NULL, &err);
	return 0;
}
