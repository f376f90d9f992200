/*
 * publish.c: where live poses go (live.h): UDP datagrams to any number of
 * targets (unicast, broadcast or multicast, IPv4 or IPv6), one packet per
 * robot per frame in JSON or binary (formats/pose_packet.h), and LCM when
 * the build has it.  Sends never block: the tracking thread must not wait
 * for a slow network, so a full socket buffer counts as a failed send.
 */
#define _POSIX_C_SOURCE 200809L
#include "live/live.h"

#include <errno.h>
#include <netdb.h>
#include <netinet/in.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <sys/types.h>
#include <unistd.h>

#include <arpa/inet.h>

#ifdef WL_HAVE_LCM
#include <lcm/lcm.h>
#endif

#define MAX_TARGETS 16

typedef struct {
	int fd;
	struct sockaddr_storage addr;
	socklen_t addr_len;
	wl_pub_format format;
	char url[256];
} udp_target;

struct wl_publisher {
	udp_target udp[MAX_TARGETS];
	int n_udp;
#ifdef WL_HAVE_LCM
	lcm_t *lcm;
#endif
	char lcm_channel[128];
	int64_t sent, failed;
	char first_error[256];
};

wl_status wl_publisher_create(wl_publisher **out, wl_err *err)
{
	wl_publisher *p = calloc(1, sizeof *p);
	*out = p;
	if (!p)
		return wl_err_set(err, WL_ENOMEM, "out of memory creating the publisher");
	return WL_OK;
}

/* The parts of udp://HOST:PORT?k=v&k=v. */
typedef struct {
	char host[128], port[16];
	wl_pub_format format;
	int ttl; /* -1: default */
	char iface[64];
} udp_url;

static wl_status parse_query(const char *url, char *q, udp_url *u, wl_err *err)
{
	char *save = NULL;
	for (char *kv = strtok_r(q, "&", &save); kv; kv = strtok_r(NULL, "&", &save)) {
		char *v = strchr(kv, '=');
		long n;
		if (!v)
			return wl_err_set(err, WL_EINVAL, "%s: '%s' is not key=value: e.g. ?format=binary",
			                  url, kv);
		*v++ = '\0';
		if (strcmp(kv, "format") == 0) {
			if (strcmp(v, "json") == 0)
				u->format = WL_PUB_JSON;
			else if (strcmp(v, "binary") == 0)
				u->format = WL_PUB_BINARY;
			else
				return wl_err_set(err, WL_EINVAL, "%s: format '%s': give json or binary", url,
				                  v);
		} else if (strcmp(kv, "ttl") == 0) {
			char *end;
			n = strtol(v, &end, 10);
			if (*v == '\0' || *end || n < 0 || n > 255)
				return wl_err_set(err, WL_EINVAL, "%s: ttl '%s': give 0 to 255", url, v);
			u->ttl = (int)n;
		} else if (strcmp(kv, "iface") == 0) {
			snprintf(u->iface, sizeof u->iface, "%s", v);
		} else {
			return wl_err_set(err, WL_EINVAL,
			                  "%s: unknown key '%s': the keys are format, ttl and iface", url,
			                  kv);
		}
	}
	return WL_OK;
}

static wl_status parse_udp_url(const char *url, wl_pub_format def, udp_url *u, wl_err *err)
{
	char buf[512], *hp, *q, *colon;
	size_t hl;
	memset(u, 0, sizeof *u);
	u->format = def;
	u->ttl = -1;
	if (strncmp(url, "udp://", 6) != 0 || strlen(url) >= sizeof buf)
		return wl_err_set(err, WL_EINVAL, "%s: not a UDP target: give udp://HOST:PORT", url);
	snprintf(buf, sizeof buf, "%s", url + 6);
	if ((q = strchr(buf, '?')))
		*q++ = '\0';
	hp = buf;
	if (*hp == '[') { /* [IPv6]:port */
		char *close = strchr(hp, ']');
		if (!close || close[1] != ':')
			return wl_err_set(err, WL_EINVAL, "%s: give udp://[IPV6]:PORT", url);
		*close = '\0';
		hp++;
		colon = close + 1;
	} else {
		colon = strrchr(hp, ':');
	}
	if (!colon || colon == hp || !colon[1])
		return wl_err_set(err, WL_EINVAL, "%s: give the host and the port: udp://HOST:PORT", url);
	*colon = '\0';
	hl = strlen(hp);
	if (hl >= sizeof u->host || strlen(colon + 1) >= sizeof u->port)
		return wl_err_set(err, WL_EINVAL, "%s: host or port too long", url);
	memcpy(u->host, hp, hl + 1);
	snprintf(u->port, sizeof u->port, "%s", colon + 1);
	{
		char *end;
		long port = strtol(u->port, &end, 10);
		if (*end || port < 1 || port > 65535)
			return wl_err_set(err, WL_EINVAL, "%s: port '%s': give 1 to 65535", url, u->port);
	}
	return q ? parse_query(url, q, u, err) : WL_OK;
}

static int is_multicast(const struct sockaddr_storage *a)
{
	if (a->ss_family == AF_INET)
		return IN_MULTICAST(ntohl(((const struct sockaddr_in *)(const void *)a)->sin_addr.s_addr));
	if (a->ss_family == AF_INET6)
		return IN6_IS_ADDR_MULTICAST(&((const struct sockaddr_in6 *)(const void *)a)->sin6_addr);
	return 0;
}

/* multicast: TTL (hop limit), loopback on (a client on this machine hears
 * it), the interface; broadcast allowed for IPv4 */
static wl_status socket_options(udp_target *t, const udp_url *u, wl_err *err)
{
	int one = 1, ttl = u->ttl >= 0 ? u->ttl : 1;
	if (t->addr.ss_family == AF_INET) {
		setsockopt(t->fd, SOL_SOCKET, SO_BROADCAST, &one, sizeof one);
		if (is_multicast(&t->addr)) {
			unsigned char c = (unsigned char)ttl, loop = 1;
			setsockopt(t->fd, IPPROTO_IP, IP_MULTICAST_TTL, &c, sizeof c);
			setsockopt(t->fd, IPPROTO_IP, IP_MULTICAST_LOOP, &loop, sizeof loop);
			if (u->iface[0]) {
				struct in_addr ia;
				if (inet_pton(AF_INET, u->iface, &ia) != 1 ||
				    setsockopt(t->fd, IPPROTO_IP, IP_MULTICAST_IF, &ia, sizeof ia) != 0)
					return wl_err_set(
					        err, WL_EINVAL,
					        "%s: iface '%s': give the IPv4 address of one of this "
					        "machine's interfaces",
					        t->url, u->iface);
			}
		} else if (u->ttl >= 0) {
			setsockopt(t->fd, IPPROTO_IP, IP_TTL, &ttl, sizeof ttl);
		}
	} else if (is_multicast(&t->addr)) {
		setsockopt(t->fd, IPPROTO_IPV6, IPV6_MULTICAST_HOPS, &ttl, sizeof ttl);
		setsockopt(t->fd, IPPROTO_IPV6, IPV6_MULTICAST_LOOP, &one, sizeof one);
	} else if (u->ttl >= 0) {
		setsockopt(t->fd, IPPROTO_IPV6, IPV6_UNICAST_HOPS, &ttl, sizeof ttl);
	}
	return WL_OK;
}

wl_status wl_publisher_add_udp(wl_publisher *p, const char *url, wl_pub_format def, wl_err *err)
{
	struct addrinfo hints, *res = NULL;
	udp_url u;
	udp_target *t;
	wl_status st;
	int rc;
	if (p->n_udp >= MAX_TARGETS)
		return wl_err_set(err, WL_EINVAL, "%s: at most %d UDP targets", url, MAX_TARGETS);
	if ((st = parse_udp_url(url, def, &u, err)) != WL_OK)
		return st;
	memset(&hints, 0, sizeof hints);
	hints.ai_family = AF_UNSPEC;
	hints.ai_socktype = SOCK_DGRAM;
	hints.ai_flags = AI_NUMERICSERV;
	if ((rc = getaddrinfo(u.host, u.port, &hints, &res)) != 0 || !res)
		return wl_err_set(err, WL_EINVAL, "%s: cannot resolve '%s': %s: check the host name", url,
		                  u.host, gai_strerror(rc));
	t = &p->udp[p->n_udp];
	memset(t, 0, sizeof *t);
	snprintf(t->url, sizeof t->url, "%s", url);
	memcpy(&t->addr, res->ai_addr, res->ai_addrlen);
	t->addr_len = res->ai_addrlen;
	t->format = u.format;
	t->fd = socket(res->ai_family, SOCK_DGRAM, 0);
	freeaddrinfo(res);
	if (t->fd < 0)
		return wl_err_set(err, WL_EIO, "%s: cannot create a UDP socket: %s", url, strerror(errno));
	if ((st = socket_options(t, &u, err)) != WL_OK) {
		close(t->fd);
		return st;
	}
	p->n_udp++;
	return WL_OK;
}

wl_status wl_publisher_add_lcm(wl_publisher *p, const char *provider, const char *channel, wl_err *err)
{
#ifdef WL_HAVE_LCM
	if (p->lcm)
		return wl_err_set(err, WL_EINVAL, "LCM is set up once");
	p->lcm = lcm_create(provider);
	if (!p->lcm)
		return wl_err_set(err, WL_EIO,
		                  "LCM: cannot set up the provider '%s': check the URL (e.g. "
		                  "udpm://239.255.76.67:7667?ttl=0) and that multicast is routed",
		                  provider ? provider : "default");
	snprintf(p->lcm_channel, sizeof p->lcm_channel, "%s", channel ? channel : "WAKELINE_POSE");
	return WL_OK;
#else
	(void)p;
	(void)provider;
	(void)channel;
	return wl_err_set(
	        err, WL_EINVAL,
	        "this build has no LCM: install liblcm-dev (Debian) and rebuild, or publish over UDP");
#endif
}

int wl_publisher_targets(const wl_publisher *p)
{
#ifdef WL_HAVE_LCM
	return p->n_udp + (p->lcm != NULL);
#else
	return p->n_udp;
#endif
}

static void count(wl_publisher *p, int ok, const char *where, const char *what)
{
	if (ok) {
		p->sent++;
		return;
	}
	if (p->failed++ == 0)
		snprintf(p->first_error, sizeof p->first_error, "%s: %s", where, what);
}

int wl_publisher_send(wl_publisher *p, const wl_pose *pose)
{
	char json[WL_POSE_JSON_MAX];
	uint8_t bin[WL_POSE_BIN_SIZE];
	size_t njson = 0, nbin = 0;
	int64_t failed0 = p->failed;
	for (int i = 0; i < p->n_udp; i++) {
		udp_target *t = &p->udp[i];
		const void *buf;
		size_t len;
		ssize_t r;
		if (t->format == WL_PUB_BINARY) {
			if (!nbin)
				nbin = wl_pose_bin_encode(pose, bin, sizeof bin);
			buf = bin;
			len = nbin;
		} else {
			if (!njson)
				njson = wl_pose_json_encode(pose, json, sizeof json);
			buf = json;
			len = njson;
		}
		r = sendto(t->fd, buf, len, MSG_DONTWAIT, (const struct sockaddr *)&t->addr, t->addr_len);
		count(p, r == (ssize_t)len, t->url, r < 0 ? strerror(errno) : "datagram cut short");
	}
#ifdef WL_HAVE_LCM
	if (p->lcm) {
		uint8_t m[WL_POSE_LCM_MAX];
		size_t n = wl_pose_lcm_encode(pose, m, sizeof m);
		count(p, n > 0 && lcm_publish(p->lcm, p->lcm_channel, m, (unsigned)n) == 0, "LCM",
		      "publish failed");
	}
#endif
	return (int)(p->failed - failed0);
}

void wl_publisher_counts(const wl_publisher *p, int64_t *sent, int64_t *failed, const char **first_error)
{
	if (sent)
		*sent = p->sent;
	if (failed)
		*failed = p->failed;
	if (first_error)
		*first_error = p->first_error;
}

void wl_publisher_destroy(wl_publisher *p)
{
	if (!p)
		return;
	for (int i = 0; i < p->n_udp; i++)
		close(p->udp[i].fd);
#ifdef WL_HAVE_LCM
	if (p->lcm)
		lcm_destroy(p->lcm);
#endif
	free(p);
}
