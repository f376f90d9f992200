/* hwy-timer-shim.c: preloaded only under valgrind (tests/e2e/0802-...).
 * Debian's libhwy 1.0.3 (loaded through libjxl by libavcodec and OpenCV)
 * measures its timer's resolution in a constructor with the RDTSCP
 * instruction, which valgrind 3.19 does not implement: every program linked
 * with it dies of SIGILL under valgrind before main.  This replaces that one
 * function (C++ name hwy::platform::TimerResolution(), which returns a tick
 * count in a uint64_t) by a constant; wakeline never uses Highway's timers. */
#include <stdint.h>

uint64_t _ZN3hwy8platform15TimerResolutionEv(void);
uint64_t _ZN3hwy8platform15TimerResolutionEv(void)
{
	return 1;
}
