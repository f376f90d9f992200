/* fuzz_clean.c: libFuzzer target for the CLEAN.csv reader (formats/clean.h)
 * and the measure stage's driver over whatever it accepts
 * (wl_measure_clean_mem, src/measure/driver.c), then the SUMMARY.json it
 * would write, read back (formats/summary.h).  Library code only. */
#include <stddef.h>
#include <stdint.h>

#include "measure/measure.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	wl_measure_clean_opts o;
	wl_summary s;
	wl_err err;
	char cell[WL_SUMMARY_CELL];
	if (size > 65536)
		return 0;
	wl_measure_clean_opts_init(&o);
	o.commanded_period_s = 0.8;
	if (wl_measure_clean_mem("CLEAN.csv", (const char *)data, size, &o, &s, &err) == WL_OK)
		for (size_t i = 0; i < s.nruns; i++)
			for (int c = 0; c < WL_SUMCOL_N; c++)
				(void)wl_summary_cell(&s.runs[i], (wl_summary_col)c, cell, sizeof cell);
	wl_summary_release(&s);
	return 0;
}
