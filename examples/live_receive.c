/*
 * live_receive.c: a C client of `wakeline live` that receives pose packets
 * (binary or JSON: docs/live.md), prints one robot's poses and stops it
 * when they stop.  An invented example to copy from: plain C11 and POSIX
 * sockets, nothing of wakeline's, so that the same decoding can go onto a
 * robot's own computer.  The binary decoder reads bytes one by one (no
 * struct overlay), so it works whatever the machine's byte order and
 * alignment rules.
 *
 *   cc -std=c11 -O2 -o live_receive examples/live_receive.c -lm
 *   ./live_receive PORT ID [TIMEOUT_MS] [PACKETS]
 *
 * Prints "POSE frame x_m y_m heading_rad speed_mps yaw_rate_radps" for
 * every packet of robot ID, "STOP <reason>" when no fresh pose has come for
 * TIMEOUT_MS (default 200) or the robot is lost, and exits after PACKETS
 * packets of that robot (0: never) or one second after a stop.
 */
#define _POSIX_C_SOURCE 200809L
#include <arpa/inet.h>
#include <math.h>
#include <netinet/in.h>
#include <poll.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <time.h>
#include <unistd.h>

typedef struct {
	uint32_t session, seq, frame;
	int32_t id;
	int status; /* 0 ok, 1 lost, 2 held */
	double t_s, arrival_unix_s, x_m, y_m, heading_rad, vx_mps, vy_mps, yaw_rate_radps, latency_ms;
} pose;

/* ---- binary: 72 bytes, little-endian (docs/live.md, "Binary packet") ---- */

static uint64_t le(const unsigned char *b, int n)
{
	uint64_t v = 0;
	for (int i = 0; i < n; i++)
		v |= (uint64_t)b[i] << (8 * i);
	return v;
}

static double f32(const unsigned char *b)
{
	uint32_t u = (uint32_t)le(b, 4);
	float f;
	memcpy(&f, &u, 4); /* IEEE 754 binary32 */
	return f;
}

static double f64(const unsigned char *b)
{
	uint64_t u = le(b, 8);
	double d;
	memcpy(&d, &u, 8);
	return d;
}

static int decode_binary(const unsigned char *b, size_t n, pose *p)
{
	if (n < 72 || memcmp(b, "WLPS", 4) != 0 || le(b + 4, 2) != 1 || le(b + 6, 2) < 72 || b[68] > 2)
		return 0;
	p->session = (uint32_t)le(b + 8, 4);
	p->seq = (uint32_t)le(b + 12, 4);
	p->frame = (uint32_t)le(b + 16, 4);
	p->id = (int32_t)(uint32_t)le(b + 20, 4);
	p->t_s = f64(b + 24);
	p->arrival_unix_s = f64(b + 32);
	p->x_m = f32(b + 40);
	p->y_m = f32(b + 44);
	p->heading_rad = f32(b + 48);
	p->vx_mps = f32(b + 52);
	p->vy_mps = f32(b + 56);
	p->yaw_rate_radps = f32(b + 60);
	p->latency_ms = f32(b + 64);
	p->status = b[68];
	return 1;
}

/* ---- JSON: one flat object; a key's value is a number, null or a string ---- */

/* The text after "key": in a NUL-terminated packet, or NULL. */
static const char *value_of(const char *js, const char *key)
{
	char pat[64];
	const char *v;
	snprintf(pat, sizeof pat, "\"%s\":", key);
	v = strstr(js, pat);
	return v ? v + strlen(pat) : NULL;
}

/* A number, NaN for null; 0 when the key is missing.  strtod reads '.'
 * decimals in the C locale, which a program has unless it calls
 * setlocale(). */
static int num(const char *js, const char *key, double *out)
{
	const char *v = value_of(js, key);
	char *end;
	if (!v)
		return 0;
	if (strncmp(v, "null", 4) == 0) {
		*out = NAN;
		return 1;
	}
	*out = strtod(v, &end);
	return end != v;
}

static int decode_json(const char *js, pose *p)
{
	const char *st;
	double d[6];
	if (!strstr(js, "\"type\":\"wakeline.pose\"") || !strstr(js, "\"version\":1,"))
		return 0;
	if (!num(js, "session", &d[0]) || !num(js, "seq", &d[1]) || !num(js, "frame", &d[2]) ||
	    !num(js, "id", &d[3]) || !num(js, "t_s", &p->t_s) ||
	    !num(js, "arrival_unix_s", &p->arrival_unix_s) || !num(js, "x_m", &p->x_m) ||
	    !num(js, "y_m", &p->y_m) || !num(js, "heading_rad", &p->heading_rad) ||
	    !num(js, "vx_mps", &p->vx_mps) || !num(js, "vy_mps", &p->vy_mps) ||
	    !num(js, "yaw_rate_radps", &p->yaw_rate_radps) || !num(js, "latency_ms", &p->latency_ms))
		return 0;
	p->session = (uint32_t)d[0];
	p->seq = (uint32_t)fmod(d[1], 4294967296.0);
	p->frame = (uint32_t)fmod(d[2], 4294967296.0);
	p->id = (int32_t)d[3];
	st = value_of(js, "status");
	if (!st)
		return 0;
	p->status = strncmp(st, "\"ok\"", 4) == 0 ? 0 : strncmp(st, "\"lost\"", 6) == 0 ? 1 : 2;
	return 1;
}

static double now_s(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

int main(int argc, char **argv)
{
	struct sockaddr_in a;
	int fd, id, timeout_ms = 200, want = 0, got = 0, stopped = 1, lost_run = 0, drove = 0;
	double last_rx = 0, stop_at = 0;
	if (argc < 3) {
		fprintf(stderr, "usage: %s PORT ID [TIMEOUT_MS] [PACKETS]\n", argv[0]);
		return 2;
	}
	id = atoi(argv[2]);
	if (argc > 3)
		timeout_ms = atoi(argv[3]);
	if (argc > 4)
		want = atoi(argv[4]);
	fd = socket(AF_INET, SOCK_DGRAM, 0);
	memset(&a, 0, sizeof a);
	a.sin_family = AF_INET;
	a.sin_addr.s_addr = htonl(INADDR_ANY);
	a.sin_port = htons((uint16_t)atoi(argv[1]));
	if (fd < 0 || bind(fd, (struct sockaddr *)&a, sizeof a) != 0) {
		perror("live_receive: bind");
		return 1;
	}
	for (;;) {
		struct pollfd pfd = {fd, POLLIN, 0};
		unsigned char buf[2048];
		pose p;
		double t;
		int ok = 0;
		if (poll(&pfd, 1, 10) > 0) {
			ssize_t n = recv(fd, buf, sizeof buf - 1, 0);
			if (n > 0) {
				buf[n] = '\0';
				ok = buf[0] == '{' ? decode_json((const char *)buf, &p)
				                   : decode_binary(buf, (size_t)n, &p);
				if (!ok)
					fprintf(stderr,
					        "live_receive: not a wakeline pose packet (%zd bytes)\n", n);
			}
		}
		t = now_s();
		if (ok && p.id == id) {
			last_rx = t;
			got++;
			lost_run = p.status == 0 ? 0 : lost_run + 1;
			printf("POSE %u %.6f %.6f %.6f %.6f %.6f\n", p.frame, p.x_m, p.y_m, p.heading_rad,
			       hypot(p.vx_mps, p.vy_mps), p.yaw_rate_radps);
			if (p.status == 0) {
				stopped = 0;
				drove = 1;
			}
		}
		/* the watchdog: no fresh pose, or the robot lost, means stop */
		if (!stopped && (t - last_rx > timeout_ms / 1000.0 || lost_run >= 5)) {
			printf("STOP %s\n", lost_run >= 5 ? "robot not seen" : "no pose in time");
			stopped = 1;
			stop_at = t;
		}
		fflush(stdout);
		if ((want > 0 && got >= want) || (drove && stopped && t - stop_at > 1.0))
			break;
	}
	close(fd);
	return 0;
}
