/* fuzz_summary.c: libFuzzer target for the SUMMARY.json reader
 * (wl_summary_parse, formats/summary.h) and the per-run CSV cells of what
 * it accepts. */
#include <stddef.h>
#include <stdint.h>

#include "formats/summary.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	wl_summary s;
	wl_err err;
	char cell[WL_SUMMARY_CELL];
	if (wl_summary_parse("SUMMARY.json", (const char *)data, size, &s, &err) == WL_OK)
		for (size_t i = 0; i < s.nruns; i++)
			for (int c = 0; c < WL_SUMCOL_N; c++)
				(void)wl_summary_cell(&s.runs[i], (wl_summary_col)c, cell, sizeof cell);
	wl_summary_release(&s);
	return 0;
}
