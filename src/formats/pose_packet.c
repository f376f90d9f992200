/*
 * pose_packet.c: the live pose packet's three encodings (pose_packet.h;
 * docs/live.md, "Packet formats").  Every JSON key and binary offset of the
 * packet is spelled here and nowhere else in the library.
 */
#include "formats/pose_packet.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "core/csvio.h"

#ifdef WL_HAVE_LCM
#include "wakeline_pose_t.h"
#endif

static const char *const STATUS_NAMES[] = {"ok", "lost", "held"};

const char *wl_pose_status_name(wl_pose_status s)
{
	return (unsigned)s < 3 ? STATUS_NAMES[s] : "?";
}

/* ---------------------------------------------------------------- JSON */

/* The number keys after "status", in packet order, with their decimals. */
typedef struct {
	const char *key;
	size_t off;
	int decimals;
} num_key;

static const num_key NUM_KEYS[] = {
        {"t_s", offsetof(wl_pose, t_s), 6},
        {"arrival_unix_s", offsetof(wl_pose, arrival_unix_s), 6},
        {"x_m", offsetof(wl_pose, x_m), 6},
        {"y_m", offsetof(wl_pose, y_m), 6},
        {"heading_rad", offsetof(wl_pose, heading_rad), 6},
        {"vx_mps", offsetof(wl_pose, vx_mps), 6},
        {"vy_mps", offsetof(wl_pose, vy_mps), 6},
        {"yaw_rate_radps", offsetof(wl_pose, yaw_rate_radps), 6},
        {"latency_ms", offsetof(wl_pose, latency_ms), 3},
};
#define N_NUM_KEYS (sizeof NUM_KEYS / sizeof NUM_KEYS[0])

static double *num_at(wl_pose *p, size_t off)
{
	return (double *)(void *)((char *)p + off);
}

/* appends ,"key":value (null for NaN); returns 0 when it does not fit */
static int put_num(char *buf, size_t cap, size_t *len, const char *key, double v, int decimals)
{
	char nb[WL_NUMBUF];
	int n = snprintf(buf + *len, cap - *len, ",\"%s\":%s", key,
	                 isfinite(v) ? wl_fmt_fixed(nb, v, decimals) : "null");
	if (n < 0 || (size_t)n >= cap - *len)
		return 0;
	*len += (size_t)n;
	return 1;
}

size_t wl_pose_json_encode(const wl_pose *p, char *buf, size_t cap)
{
	size_t len;
	int n;
	wl_pose q = *p;
	if (!buf || cap == 0)
		return 0;
	n = snprintf(buf, cap,
	             "{\"type\":\"%s\",\"version\":%d,\"session\":%lu,\"seq\":%llu,\"frame\":%lld,\"id\":%ld,"
	             "\"status\":\"%s\"",
	             WL_POSE_TYPE, WL_POSE_VERSION, (unsigned long)p->session, (unsigned long long)p->seq,
	             (long long)p->frame, (long)p->id, wl_pose_status_name(p->status));
	if (n < 0 || (size_t)n >= cap)
		return 0;
	len = (size_t)n;
	for (size_t i = 0; i < N_NUM_KEYS; i++) {
		if (!put_num(buf, cap, &len, NUM_KEYS[i].key, *num_at(&q, NUM_KEYS[i].off),
		             NUM_KEYS[i].decimals))
			return 0;
		/* the speed, for convenience, after the velocity */
		if (strcmp(NUM_KEYS[i].key, "vy_mps") == 0 &&
		    !put_num(buf, cap, &len, "speed_mps", hypot(p->vx_mps, p->vy_mps), 6))
			return 0;
	}
	if (len + 2 > cap)
		return 0;
	buf[len++] = '}';
	buf[len] = '\0';
	return len;
}

static wl_status json_int(const cJSON *o, const char *key, double lo, double hi, double *out, wl_err *err)
{
	const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
	if (!cJSON_IsNumber(v) || v->valuedouble < lo || v->valuedouble > hi ||
	    v->valuedouble != floor(v->valuedouble))
		return wl_err_set(err, WL_EFORMAT, "JSON pose: key '%s' is missing or not a whole number",
		                  key);
	*out = v->valuedouble;
	return WL_OK;
}

static wl_status json_fields(const cJSON *o, wl_pose *p, wl_err *err)
{
	const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, "type");
	double d;
	int i;
	if (!cJSON_IsString(v) || strcmp(v->valuestring, WL_POSE_TYPE) != 0)
		return wl_err_set(err, WL_EFORMAT,
		                  "JSON pose: \"type\" is not \"%s\": this is not a wakeline pose packet",
		                  WL_POSE_TYPE);
	if (json_int(o, "version", 0, 1e9, &d, err) != WL_OK)
		return WL_EFORMAT;
	if (d != WL_POSE_VERSION)
		return wl_err_set(err, WL_EFORMAT,
		                  "JSON pose: version %.0f: this reader knows version %d: update the client",
		                  d, WL_POSE_VERSION);
	if (json_int(o, "session", 0, 4294967295.0, &d, err) != WL_OK)
		return WL_EFORMAT;
	p->session = (uint32_t)d;
	if (json_int(o, "seq", 0, 9007199254740992.0, &d, err) != WL_OK)
		return WL_EFORMAT;
	p->seq = (uint64_t)d;
	if (json_int(o, "frame", -9007199254740992.0, 9007199254740992.0, &d, err) != WL_OK)
		return WL_EFORMAT;
	p->frame = (int64_t)d;
	if (json_int(o, "id", -2147483648.0, 2147483647.0, &d, err) != WL_OK)
		return WL_EFORMAT;
	p->id = (int32_t)d;
	v = cJSON_GetObjectItemCaseSensitive(o, "status");
	for (i = 0; i < 3 && cJSON_IsString(v); i++)
		if (strcmp(v->valuestring, STATUS_NAMES[i]) == 0)
			break;
	if (!cJSON_IsString(v) || i == 3)
		return wl_err_set(err, WL_EFORMAT, "JSON pose: \"status\" is not ok, lost or held");
	p->status = (wl_pose_status)i;
	for (size_t k = 0; k < N_NUM_KEYS; k++) {
		v = cJSON_GetObjectItemCaseSensitive(o, NUM_KEYS[k].key);
		if (cJSON_IsNull(v))
			*num_at(p, NUM_KEYS[k].off) = NAN;
		else if (cJSON_IsNumber(v))
			*num_at(p, NUM_KEYS[k].off) = v->valuedouble;
		else
			return wl_err_set(err, WL_EFORMAT, "JSON pose: key '%s' is missing or not a number",
			                  NUM_KEYS[k].key);
	}
	return WL_OK;
}

wl_status wl_pose_json_decode(const char *buf, size_t len, wl_pose *p, wl_err *err)
{
	cJSON *o = cJSON_ParseWithLength(buf, len);
	wl_status st;
	memset(p, 0, sizeof *p);
	if (!cJSON_IsObject(o)) {
		cJSON_Delete(o);
		return wl_err_set(err, WL_EFORMAT, "JSON pose: not a JSON object: check the sender's format");
	}
	st = json_fields(o, p, err);
	cJSON_Delete(o);
	return st;
}

/* -------------------------------------------------------------- binary */

/*
 * Version 1, 72 bytes, little-endian, every field at an offset that is a
 * multiple of its size (a C struct with these members has no padding):
 *    0 char[4] magic "WLPS"        40 f32 x_m
 *    4 u16 version (1)             44 f32 y_m
 *    6 u16 size (72)               48 f32 heading_rad
 *    8 u32 session                 52 f32 vx_mps
 *   12 u32 seq (low 32 bits)       56 f32 vy_mps
 *   16 u32 frame (low 32 bits)     60 f32 yaw_rate_radps
 *   20 i32 id                      64 f32 latency_ms
 *   24 f64 t_s                     68 u8  status (0 ok, 1 lost, 2 held)
 *   32 f64 arrival_unix_s          69 u8[3] zero
 */
enum {
	B_MAGIC = 0,
	B_VERSION = 4,
	B_SIZE = 6,
	B_SESSION = 8,
	B_SEQ = 12,
	B_FRAME = 16,
	B_ID = 20,
	B_T = 24,
	B_ARRIVAL = 32,
	B_X = 40,
	B_Y = 44,
	B_HEADING = 48,
	B_VX = 52,
	B_VY = 56,
	B_YAW_RATE = 60,
	B_LATENCY = 64,
	B_STATUS = 68
};

static void put_le(uint8_t *b, uint64_t v, int n)
{
	for (int i = 0; i < n; i++)
		b[i] = (uint8_t)(v >> (8 * i));
}

static uint64_t get_le(const uint8_t *b, int n)
{
	uint64_t v = 0;
	for (int i = 0; i < n; i++)
		v |= (uint64_t)b[i] << (8 * i);
	return v;
}

static void put_f32(uint8_t *b, double v)
{
	float f = (float)v;
	uint32_t u;
	memcpy(&u, &f, 4);
	put_le(b, u, 4);
}

static void put_f64(uint8_t *b, double v)
{
	uint64_t u;
	memcpy(&u, &v, 8);
	put_le(b, u, 8);
}

static double get_f32(const uint8_t *b)
{
	uint32_t u = (uint32_t)get_le(b, 4);
	float f;
	memcpy(&f, &u, 4);
	return f;
}

static double get_f64(const uint8_t *b)
{
	uint64_t u = get_le(b, 8);
	double d;
	memcpy(&d, &u, 8);
	return d;
}

size_t wl_pose_bin_encode(const wl_pose *p, uint8_t *b, size_t cap)
{
	if (!b || cap < WL_POSE_BIN_SIZE)
		return 0;
	memset(b, 0, WL_POSE_BIN_SIZE);
	memcpy(b + B_MAGIC, WL_POSE_MAGIC, 4);
	put_le(b + B_VERSION, WL_POSE_VERSION, 2);
	put_le(b + B_SIZE, WL_POSE_BIN_SIZE, 2);
	put_le(b + B_SESSION, p->session, 4);
	put_le(b + B_SEQ, (uint32_t)p->seq, 4);
	put_le(b + B_FRAME, (uint32_t)(uint64_t)p->frame, 4);
	put_le(b + B_ID, (uint32_t)p->id, 4);
	put_f64(b + B_T, p->t_s);
	put_f64(b + B_ARRIVAL, p->arrival_unix_s);
	put_f32(b + B_X, p->x_m);
	put_f32(b + B_Y, p->y_m);
	put_f32(b + B_HEADING, p->heading_rad);
	put_f32(b + B_VX, p->vx_mps);
	put_f32(b + B_VY, p->vy_mps);
	put_f32(b + B_YAW_RATE, p->yaw_rate_radps);
	put_f32(b + B_LATENCY, p->latency_ms);
	b[B_STATUS] = (uint8_t)p->status;
	return WL_POSE_BIN_SIZE;
}

wl_status wl_pose_bin_decode(const uint8_t *b, size_t len, wl_pose *p, wl_err *err)
{
	unsigned version, size;
	memset(p, 0, sizeof *p);
	if (len < 8 || memcmp(b + B_MAGIC, WL_POSE_MAGIC, 4) != 0)
		return wl_err_set(err, WL_EFORMAT,
		                  "binary pose: magic is not WLPS: this is not a wakeline pose packet");
	version = (unsigned)get_le(b + B_VERSION, 2);
	size = (unsigned)get_le(b + B_SIZE, 2);
	if (version != WL_POSE_VERSION)
		return wl_err_set(err, WL_EFORMAT,
		                  "binary pose: version %u: this reader knows version %d: update the client",
		                  version, WL_POSE_VERSION);
	if (size < WL_POSE_BIN_SIZE || size > len)
		return wl_err_set(
		        err, WL_EFORMAT,
		        "binary pose: size field %u, packet of %zu bytes: version 1 needs %d or more", size,
		        len, WL_POSE_BIN_SIZE);
	if (b[B_STATUS] > WL_POSE_HELD)
		return wl_err_set(err, WL_EFORMAT, "binary pose: status %u is not 0, 1 or 2", b[B_STATUS]);
	p->session = (uint32_t)get_le(b + B_SESSION, 4);
	p->seq = get_le(b + B_SEQ, 4);
	p->frame = (int64_t)get_le(b + B_FRAME, 4);
	p->id = (int32_t)(uint32_t)get_le(b + B_ID, 4);
	p->t_s = get_f64(b + B_T);
	p->arrival_unix_s = get_f64(b + B_ARRIVAL);
	p->x_m = get_f32(b + B_X);
	p->y_m = get_f32(b + B_Y);
	p->heading_rad = get_f32(b + B_HEADING);
	p->vx_mps = get_f32(b + B_VX);
	p->vy_mps = get_f32(b + B_VY);
	p->yaw_rate_radps = get_f32(b + B_YAW_RATE);
	p->latency_ms = get_f32(b + B_LATENCY);
	p->status = (wl_pose_status)b[B_STATUS];
	return WL_OK;
}

/* ----------------------------------------------------------------- LCM */

#ifdef WL_HAVE_LCM
int wl_pose_lcm_available(void)
{
	return 1;
}

size_t wl_pose_lcm_encode(const wl_pose *p, uint8_t *buf, size_t cap)
{
	wakeline_pose_t m;
	int n;
	m.version = WL_POSE_VERSION;
	m.session = p->session;
	m.seq = (int64_t)p->seq;
	m.frame = p->frame;
	m.id = p->id;
	m.status = (int8_t)p->status;
	m.t_s = p->t_s;
	m.arrival_unix_s = p->arrival_unix_s;
	m.x_m = p->x_m;
	m.y_m = p->y_m;
	m.heading_rad = p->heading_rad;
	m.vx_mps = p->vx_mps;
	m.vy_mps = p->vy_mps;
	m.yaw_rate_radps = p->yaw_rate_radps;
	m.latency_ms = (float)p->latency_ms;
	if (!buf || cap > 0x7fffffff || (size_t)wakeline_pose_t_encoded_size(&m) > cap)
		return 0;
	n = wakeline_pose_t_encode(buf, 0, (int)cap, &m);
	return n > 0 ? (size_t)n : 0;
}

wl_status wl_pose_lcm_decode(const uint8_t *buf, size_t len, wl_pose *p, wl_err *err)
{
	wakeline_pose_t m;
	memset(p, 0, sizeof *p);
	if (len > 0x7fffffff || wakeline_pose_t_decode(buf, 0, (int)len, &m) < 0)
		return wl_err_set(err, WL_EFORMAT,
		                  "LCM pose: not a wakeline.pose_t message (fingerprint or length differ)");
	if (m.version != WL_POSE_VERSION || m.status < 0 || m.status > WL_POSE_HELD)
		return wl_err_set(err, WL_EFORMAT, "LCM pose: version %d or status %d not known", m.version,
		                  m.status);
	p->session = (uint32_t)m.session;
	p->seq = (uint64_t)m.seq;
	p->frame = m.frame;
	p->id = m.id;
	p->status = (wl_pose_status)m.status;
	p->t_s = m.t_s;
	p->arrival_unix_s = m.arrival_unix_s;
	p->x_m = m.x_m;
	p->y_m = m.y_m;
	p->heading_rad = m.heading_rad;
	p->vx_mps = m.vx_mps;
	p->vy_mps = m.vy_mps;
	p->yaw_rate_radps = m.yaw_rate_radps;
	p->latency_ms = m.latency_ms;
	wakeline_pose_t_decode_cleanup(&m);
	return WL_OK;
}
#else
int wl_pose_lcm_available(void)
{
	return 0;
}

size_t wl_pose_lcm_encode(const wl_pose *p, uint8_t *buf, size_t cap)
{
	(void)p;
	(void)buf;
	(void)cap;
	return 0;
}

wl_status wl_pose_lcm_decode(const uint8_t *buf, size_t len, wl_pose *p, wl_err *err)
{
	(void)buf;
	(void)len;
	memset(p, 0, sizeof *p);
	return wl_err_set(err, WL_EINVAL, "this build has no LCM: install liblcm-dev and rebuild");
}
#endif
