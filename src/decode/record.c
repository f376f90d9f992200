/*
 * record.c: the incoming video stream copied to a file as it arrives, for
 * `wakeline live --record` (see record.h).  A stream copy: the packets are
 * remuxed with their own timestamps, nothing is decoded or encoded.
 */
#include "decode/record.h"

#include <stdlib.h>
#include <string.h>

#include <libavutil/opt.h>

struct wl_rec {
	AVFormatContext *out;
	AVStream *st;
	AVPacket *pkt;
	char path[1024];
	int started; /* a key frame was written */
	int64_t last_dts;
};

static wl_status rec_fail(wl_err *err, const char *path, const char *what, int averr)
{
	char buf[AV_ERROR_MAX_STRING_SIZE] = "";
	av_strerror(averr, buf, sizeof buf);
	return wl_err_set(err, WL_EIO, "%s: %s: %s: check the folder and the free space", path, what, buf);
}

/* true when the container is MP4-like and must be written in fragments to
 * survive a kill (its index is otherwise written only at the end) */
static int is_mp4_like(const AVOutputFormat *f)
{
	return f &&
	       (strcmp(f->name, "mp4") == 0 || strcmp(f->name, "mov") == 0 || strcmp(f->name, "ipod") == 0);
}

wl_status wl_rec_open(const char *path, const AVStream *in, wl_rec **out, wl_err *err)
{
	wl_rec *r = calloc(1, sizeof *r);
	AVDictionary *opts = NULL;
	int ret;
	wl_status st = WL_OK;

	*out = NULL;
	if (!r)
		return wl_err_set(err, WL_ENOMEM, "%s: out of memory", path);
	snprintf(r->path, sizeof r->path, "%s", path);
	r->last_dts = AV_NOPTS_VALUE;
	ret = avformat_alloc_output_context2(&r->out, NULL, NULL, path);
	if (ret < 0 || !r->out) {
		st = wl_err_set(err, WL_EINVAL,
		                "%s: no container for this file name: end it in .ts, .mkv or .mp4", path);
		goto fail;
	}
	r->st = avformat_new_stream(r->out, NULL);
	r->pkt = av_packet_alloc();
	if (!r->st || !r->pkt) {
		st = wl_err_set(err, WL_ENOMEM, "%s: out of memory", path);
		goto fail;
	}
	if ((ret = avcodec_parameters_copy(r->st->codecpar, in->codecpar)) < 0) {
		st = rec_fail(err, path, "cannot copy the stream's parameters", ret);
		goto fail;
	}
	r->st->codecpar->codec_tag = 0; /* let the container choose its own tag */
	r->st->time_base = in->time_base;
	if (!(r->out->oformat->flags & AVFMT_NOFILE) &&
	    (ret = avio_open(&r->out->pb, path, AVIO_FLAG_WRITE)) < 0) {
		st = rec_fail(err, path, "cannot create the recording", ret);
		goto fail;
	}
	if (is_mp4_like(r->out->oformat))
		av_dict_set(&opts, "movflags", "+frag_keyframe+empty_moov+default_base_moof", 0);
	/* every packet goes to the file at once: a kill loses at most the one
	 * being written */
	r->out->flush_packets = 1;
	ret = avformat_write_header(r->out, &opts);
	av_dict_free(&opts);
	if (ret < 0) {
		st = rec_fail(err, path, "cannot write the recording's header", ret);
		goto fail;
	}
	*out = r;
	return WL_OK;
fail:
	if (r->out && r->out->pb && !(r->out->oformat->flags & AVFMT_NOFILE))
		avio_closep(&r->out->pb);
	avformat_free_context(r->out);
	av_packet_free(&r->pkt);
	free(r);
	return st;
}

int wl_rec_packet(wl_rec *r, const AVPacket *pkt, const AVStream *in)
{
	int ret;
	if (!r->started && !(pkt->flags & AV_PKT_FLAG_KEY))
		return 0;
	/* a muxer refuses timestamps that go backwards; a live source may send
	 * such a packet after a glitch: leave it out of the copy */
	if (pkt->dts != AV_NOPTS_VALUE && r->last_dts != AV_NOPTS_VALUE && pkt->dts <= r->last_dts)
		return 0;
	r->started = 1;
	if ((ret = av_packet_ref(r->pkt, pkt)) < 0)
		return ret;
	r->pkt->stream_index = 0;
	r->pkt->pos = -1;
	av_packet_rescale_ts(r->pkt, in->time_base, r->st->time_base);
	if (r->pkt->dts != AV_NOPTS_VALUE)
		r->last_dts = pkt->dts;
	ret = av_write_frame(r->out, r->pkt);
	av_packet_unref(r->pkt);
	return ret;
}

wl_status wl_rec_close(wl_rec *r, wl_err *err)
{
	wl_status st = WL_OK;
	int ret;
	if (!r)
		return WL_OK;
	if ((ret = av_write_trailer(r->out)) < 0)
		st = rec_fail(err, r->path, "cannot finish the recording", ret);
	if (r->out->pb && !(r->out->oformat->flags & AVFMT_NOFILE)) {
		if ((ret = avio_closep(&r->out->pb)) < 0 && st == WL_OK)
			st = rec_fail(err, r->path, "cannot close the recording", ret);
	}
	avformat_free_context(r->out);
	av_packet_free(&r->pkt);
	free(r);
	return st;
}
