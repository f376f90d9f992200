/* fuzz_pose_packet.c: libFuzzer target for the live pose packet's decoders
 * (JSON, binary, LCM): datagrams from a network are untrusted.  What a
 * decoder accepts is encoded again and must decode to the same record. */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include "formats/pose_packet.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static int same(double a, double b)
{
	return (isnan(a) && isnan(b)) || a == b || fabs(a - b) <= 1e-6 * (1 + fabs(a));
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	wl_pose p, q;
	uint8_t bin[WL_POSE_BIN_SIZE], lcm[WL_POSE_LCM_MAX];
	size_t n;
	if (size > 4096)
		return 0;
	if (wl_pose_bin_decode(data, size, &p, NULL) == WL_OK) {
		/* the header (but the size: a longer packet of a later release
		 * comes back as version 1's 72 bytes) and the doubles come back
		 * byte for byte; the floats as values (a signalling NaN comes back
		 * quiet) */
		n = wl_pose_bin_encode(&p, bin, sizeof bin);
		if (n != WL_POSE_BIN_SIZE || wl_pose_bin_decode(bin, n, &q, NULL) != WL_OK ||
		    memcmp(bin, data, 6) != 0 || memcmp(bin + 8, data + 8, 32) != 0 || bin[68] != data[68] ||
		    !same(p.x_m, q.x_m) || !same(p.y_m, q.y_m) || !same(p.heading_rad, q.heading_rad) ||
		    !same(p.vx_mps, q.vx_mps) || !same(p.vy_mps, q.vy_mps) ||
		    !same(p.yaw_rate_radps, q.yaw_rate_radps) || !same(p.latency_ms, q.latency_ms))
			__builtin_trap();
	}
	(void)wl_pose_json_decode((const char *)data, size, &p, NULL);
	if (wl_pose_lcm_decode(data, size, &p, NULL) == WL_OK) {
		n = wl_pose_lcm_encode(&p, lcm, sizeof lcm);
		if (n == 0 || wl_pose_lcm_decode(lcm, n, &q, NULL) != WL_OK || q.seq != p.seq ||
		    !same(p.t_s, q.t_s))
			__builtin_trap();
	}
	return 0;
}
