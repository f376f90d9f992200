/*
 * record.c: the incoming video stream copied to a file as it arrives, for
 * `wakeline live --record` (see record.h).  A stream copy: the packets are
 * remuxed with their own timestamps, nothing is decoded or encoded.
 *
 * A live stream's parameters are often incomplete when it opens (MPEG-TS
 * carries the picture size and the H.264 parameter sets in the stream, and
 * probing is kept short for low delay), so the header is written once the
 * decoder has decoded the first frame (wl_rec_ready): the size from the
 * decoder, the parameter sets that MP4 needs in its header from the first
 * key frame (FFmpeg's extract_extradata filter).  Packets from the first
 * key frame until then are held (a few at most).
 */
#include "decode/record.h"

#include <limits.h>
#include <stdlib.h>
#include <string.h>

#include "decode/av.h" /* FFmpeg, loaded on first use */

/* packets held before the header; more means no frame decodes: dropped */
#define HOLD_MAX 256

struct wl_rec {
	AVFormatContext *out;
	AVStream *st;
	AVPacket *pkt;
	char path[1024];
	int started;     /* the first key frame came */
	int need_header; /* the header waits for wl_rec_ready */
	AVDictionary *hdr_opts;
	AVPacket *held[HOLD_MAX];
	int nheld;
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

static void free_rec(wl_rec *r)
{
	if (r->out && r->out->pb && !(r->out->oformat->flags & AVFMT_NOFILE))
		avio_closep(&r->out->pb);
	avformat_free_context(r->out);
	av_packet_free(&r->pkt);
	for (int i = 0; i < r->nheld; i++)
		av_packet_free(&r->held[i]);
	av_dict_free(&r->hdr_opts);
	free(r);
}

wl_status wl_rec_open(const char *path, const AVStream *in, wl_rec **out, wl_err *err)
{
	wl_rec *r;
	int ret;
	wl_status st;

	*out = NULL;
	if ((st = wl_av_load(err)) != WL_OK)
		return wl_err_prefix(err, st, "%s", path);
	r = calloc(1, sizeof *r);
	if (!r)
		return wl_err_set(err, WL_ENOMEM, "%s: out of memory", path);
	snprintf(r->path, sizeof r->path, "%s", path);
	r->last_dts = AV_NOPTS_VALUE;
	r->need_header = 1;
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
	/* the file is created now, so that a folder that cannot take it is
	 * said at the start */
	if (!(r->out->oformat->flags & AVFMT_NOFILE) &&
	    (ret = avio_open(&r->out->pb, path, AVIO_FLAG_WRITE)) < 0) {
		st = rec_fail(err, path, "cannot create the recording", ret);
		goto fail;
	}
	if (is_mp4_like(r->out->oformat))
		av_dict_set(&r->hdr_opts, "movflags", "+frag_keyframe+empty_moov+default_base_moof", 0);
	/* every packet goes to the file at once: a kill loses at most the one
	 * being written (MP4: the fragment being written, up to a key frame) */
	r->out->flush_packets = 1;
	*out = r;
	return WL_OK;
fail:
	free_rec(r);
	return st;
}

/* The parameter sets of a key packet (extract_extradata) as extradata. */
static int extradata_from(AVCodecParameters *par, const AVPacket *pkt, const AVStream *in)
{
	const AVBitStreamFilter *f = av_bsf_get_by_name("extract_extradata");
	AVBSFContext *bsf = NULL;
	AVPacket *tmp = av_packet_alloc();
	int ret = f && tmp ? av_bsf_alloc(f, &bsf) : AVERROR(ENOMEM);
	if (ret >= 0 && (ret = avcodec_parameters_copy(bsf->par_in, in->codecpar)) >= 0) {
		bsf->time_base_in = in->time_base;
		if ((ret = av_bsf_init(bsf)) >= 0 && (ret = av_packet_ref(tmp, pkt)) >= 0 &&
		    (ret = av_bsf_send_packet(bsf, tmp)) >= 0 &&
		    (ret = av_bsf_receive_packet(bsf, tmp)) >= 0) {
			size_t n = 0;
			const uint8_t *x = av_packet_get_side_data(tmp, AV_PKT_DATA_NEW_EXTRADATA, &n);
			if (!x || n == 0 || n > INT_MAX - AV_INPUT_BUFFER_PADDING_SIZE)
				ret = AVERROR_INVALIDDATA;
			else if (!(par->extradata = av_mallocz(n + AV_INPUT_BUFFER_PADDING_SIZE)))
				ret = AVERROR(ENOMEM);
			else {
				memcpy(par->extradata, x, n);
				par->extradata_size = (int)n;
			}
		}
	}
	av_bsf_free(&bsf);
	av_packet_free(&tmp);
	return ret;
}

static int write_one(wl_rec *r, const AVPacket *pkt, const AVStream *in)
{
	int ret;
	/* a muxer refuses timestamps that go backwards; a live source may send
	 * such a packet after a glitch: leave it out of the copy */
	if (pkt->dts != AV_NOPTS_VALUE && r->last_dts != AV_NOPTS_VALUE && pkt->dts <= r->last_dts)
		return 0;
	if ((ret = av_packet_ref(r->pkt, pkt)) < 0)
		return ret;
	r->pkt->stream_index = 0;
	r->pkt->pos = -1;
	av_packet_rescale_ts(r->pkt, in->time_base, r->st->time_base);
	if (pkt->dts != AV_NOPTS_VALUE)
		r->last_dts = pkt->dts;
	ret = av_write_frame(r->out, r->pkt);
	av_packet_unref(r->pkt);
	return ret;
}

int wl_rec_packet(wl_rec *r, const AVPacket *pkt, const AVStream *in)
{
	if (!r->started && !(pkt->flags & AV_PKT_FLAG_KEY))
		return 0;
	r->started = 1;
	if (r->need_header) {
		if (r->nheld >= HOLD_MAX)
			return 0;
		if (!(r->held[r->nheld] = av_packet_clone(pkt)))
			return AVERROR(ENOMEM);
		r->nheld++;
		return 0;
	}
	return write_one(r, pkt, in);
}

int wl_rec_ready(wl_rec *r, const AVCodecContext *cc, const AVStream *in)
{
	AVCodecParameters *par = r->st->codecpar;
	int ret = 0;
	if (!r->need_header || r->nheld == 0)
		return 0;
	r->need_header = 0;
	if (par->width <= 0 || par->height <= 0) {
		par->width = cc->width;
		par->height = cc->height;
	}
	if (par->format < 0 && cc->pix_fmt >= 0)
		par->format = cc->pix_fmt;
	if (is_mp4_like(r->out->oformat) && par->extradata_size == 0)
		ret = extradata_from(par, r->held[0], in);
	if (ret >= 0)
		ret = avformat_write_header(r->out, &r->hdr_opts);
	for (int i = 0; i < r->nheld; i++) {
		if (ret >= 0)
			ret = write_one(r, r->held[i], in);
		av_packet_free(&r->held[i]);
	}
	r->nheld = 0;
	return ret;
}

wl_status wl_rec_close(wl_rec *r, wl_err *err)
{
	wl_status st = WL_OK;
	int ret;
	if (!r)
		return WL_OK;
	/* with no frame decoded the header was never written: an empty file */
	if (!r->need_header && (ret = av_write_trailer(r->out)) < 0)
		st = rec_fail(err, r->path, "cannot finish the recording", ret);
	if (r->out->pb && !(r->out->oformat->flags & AVFMT_NOFILE)) {
		if ((ret = avio_closep(&r->out->pb)) < 0 && st == WL_OK)
			st = rec_fail(err, r->path, "cannot close the recording", ret);
	}
	free_rec(r);
	return st;
}
