/*
 * pose_packet.h: the live pose packet, what `wakeline live` sends to its
 * clients for every robot in every tracked frame.  This file and
 * pose_packet.c are the only code that knows the packet's layouts; the
 * user's reference is docs/live.md ("Packet formats"), which lists the same
 * fields and offsets.
 *
 * Three encodings of one record (wl_pose):
 *   JSON    one compact object per datagram, keys in the order of wl_pose;
 *           numbers with '.' decimals whatever the locale; NaN is null.
 *   binary  WL_POSE_BIN_SIZE bytes, little-endian, fixed offsets, for
 *           microcontrollers: magic "WLPS", a version and the packet's size
 *           first, so that a reader refuses what it does not know and a
 *           later version may append fields (a version-1 reader reads the
 *           first 72 bytes of a longer packet of the same version).
 *   LCM     the message type src/formats/lcm/wakeline_pose.lcm (LCM's own
 *           big-endian encoding with its type fingerprint), when the build
 *           has LCM (WL_HAVE_LCM; wl_pose_lcm_available).
 *
 * Units are SI with the unit in the name; headings counter-clockwise from
 * +x in (-pi, pi].  Ownership: plain values, nothing to free.  Errors:
 * decoders return WL_EFORMAT with what is wrong ("binary pose: magic is
 * not WLPS: this is not a wakeline pose packet").
 */
#ifndef WL_FORMATS_POSE_PACKET_H
#define WL_FORMATS_POSE_PACKET_H

#include <stddef.h>
#include <stdint.h>

#include "core/err.h"

#define WL_POSE_VERSION 1
#define WL_POSE_TYPE "wakeline.pose" /* JSON "type" */
#define WL_POSE_MAGIC "WLPS"         /* binary, bytes 0-3 */
#define WL_POSE_BIN_SIZE 72          /* binary, version 1 */
#define WL_POSE_JSON_MAX 512         /* an encoded JSON packet is shorter */
#define WL_POSE_LCM_MAX 256          /* an LCM-encoded packet is shorter */

typedef enum {
	WL_POSE_OK = 0,   /* detected in this frame */
	WL_POSE_LOST = 1, /* not found in this frame (pose fields NaN) */
	WL_POSE_HELD = 2  /* a pose the tracker kept without a new detection */
} wl_pose_status;

const char *wl_pose_status_name(wl_pose_status s); /* "ok", "lost", "held" */

typedef struct {
	uint32_t session; /* random per run: a client sees a restart */
	uint64_t seq;     /* per packet from 0, +1 each (binary: low 32 bits) */
	int64_t frame;    /* frame index in the run; gaps are dropped frames (binary: low 32 bits) */
	int32_t id;       /* robot id */
	wl_pose_status status;
	double t_s;            /* frame time, s since the run's first frame (stream timestamps) */
	double arrival_unix_s; /* wall clock (Unix time, UTC) when the frame arrived */
	double x_m, y_m;       /* tank frame; NaN when lost */
	double heading_rad;    /* NaN when lost or unknown */
	double vx_mps, vy_mps; /* causal filter; NaN when unknown */
	double yaw_rate_radps; /* causal filter; NaN when unknown */
	double latency_ms;     /* from the frame's arrival to this packet */
} wl_pose;

/* JSON: writes the object (no newline, NUL-terminated) into buf and
 * returns its length, or 0 when cap is too small (WL_POSE_JSON_MAX is
 * always enough).  speed_mps = hypot(vx, vy) is added for convenience. */
size_t wl_pose_json_encode(const wl_pose *p, char *buf, size_t cap);
/* Parses one JSON packet of len bytes (no NUL needed).  Unknown keys are
 * ignored (a later version may add some); a missing key, a wrong type or
 * another version is WL_EFORMAT. */
wl_status wl_pose_json_decode(const char *buf, size_t len, wl_pose *p, wl_err *err);

/* Binary: writes WL_POSE_BIN_SIZE bytes, returns that, or 0 if cap is too
 * small.  Floats are IEEE 754 (positions and speeds single precision,
 * times double). */
size_t wl_pose_bin_encode(const wl_pose *p, uint8_t *buf, size_t cap);
/* Reads a binary packet; refuses a wrong magic, another version or a size
 * field shorter than version 1's or longer than len. */
wl_status wl_pose_bin_decode(const uint8_t *buf, size_t len, wl_pose *p, wl_err *err);

/* LCM (wakeline.pose_t): 1 when this build has it; the coders return 0 /
 * WL_EINVAL ("this build has no LCM") otherwise. */
int wl_pose_lcm_available(void);
size_t wl_pose_lcm_encode(const wl_pose *p, uint8_t *buf, size_t cap);
wl_status wl_pose_lcm_decode(const uint8_t *buf, size_t len, wl_pose *p, wl_err *err);

#endif
