/*
 * av.h: FFmpeg's functions as the decode module calls them, loaded from the
 * libraries on first use (av.c).  Private to src/decode/.
 *
 * Linked directly, libavformat and libavcodec bring some 130 libraries
 * (every codec, TLS, network protocols) into every process: ~80 ms of
 * start-up for each command, which for `clean`, `measure` and `merge` on a
 * whole clip is more than their own work.  Instead the four libraries are
 * opened with dlopen by wl_av_load the first time a clip, a stream or an
 * image is opened or written, and each FFmpeg function named below is
 * called through a table of pointers: after this header, a call such as
 * avformat_open_input(...) in decode.c, vwriter.c, record.c and image.c is
 * a call through wl_av_fn.avformat_open_input.  The pointers have the
 * types of FFmpeg's own declarations (__typeof__), so the compiler checks
 * every call as before.
 *
 * Every public entry point of the module that reaches FFmpeg calls
 * wl_av_load first.  A function added to these files must be added to
 * WL_AV_FUNCS and to the defines at the end; otherwise the call links to
 * FFmpeg directly, and the test lint/lazy-ffmpeg (which reads the NEEDED
 * entries of the wakeline binary) fails.
 */
#ifndef WL_DECODE_AV_H
#define WL_DECODE_AV_H

#include <libavcodec/avcodec.h>
#include <libavcodec/bsf.h>
#include <libavformat/avformat.h>
#include <libavutil/display.h>
#include <libavutil/frame.h>
#include <libavutil/imgutils.h>
#include <libavutil/log.h>
#include <libavutil/opt.h>
#include <libavutil/pixdesc.h>
#include <libswscale/swscale.h>

#include "core/err.h"

/* The FFmpeg functions the module calls. */
#define WL_AV_FUNCS(X)                                                                                       \
	X(av_bsf_alloc)                                                                                      \
	X(av_bsf_free)                                                                                       \
	X(av_bsf_get_by_name)                                                                                \
	X(av_bsf_init)                                                                                       \
	X(av_bsf_receive_packet)                                                                             \
	X(av_bsf_send_packet)                                                                                \
	X(av_d2q)                                                                                            \
	X(av_dict_copy)                                                                                      \
	X(av_dict_free)                                                                                      \
	X(av_dict_get)                                                                                       \
	X(av_dict_set)                                                                                       \
	X(av_display_rotation_get)                                                                           \
	X(av_display_rotation_set)                                                                           \
	X(av_find_best_stream)                                                                               \
	X(av_find_input_format)                                                                              \
	X(av_frame_alloc)                                                                                    \
	X(av_frame_free)                                                                                     \
	X(av_frame_get_buffer)                                                                               \
	X(av_frame_make_writable)                                                                            \
	X(av_frame_unref)                                                                                    \
	X(av_free)                                                                                           \
	X(av_get_pix_fmt_name)                                                                               \
	X(av_guess_frame_rate)                                                                               \
	X(av_interleaved_write_frame)                                                                        \
	X(av_log_get_level)                                                                                  \
	X(av_log_set_level)                                                                                  \
	X(av_malloc)                                                                                         \
	X(av_mallocz)                                                                                        \
	X(av_opt_set_int)                                                                                    \
	X(av_packet_alloc)                                                                                   \
	X(av_packet_clone)                                                                                   \
	X(av_packet_free)                                                                                    \
	X(av_packet_get_side_data)                                                                           \
	X(av_packet_ref)                                                                                     \
	X(av_packet_rescale_ts)                                                                              \
	X(av_packet_unref)                                                                                   \
	X(av_pix_fmt_desc_get)                                                                               \
	X(av_read_frame)                                                                                     \
	X(av_seek_frame)                                                                                     \
	X(av_stream_add_side_data)                                                                           \
	X(av_stream_get_side_data)                                                                           \
	X(av_strerror)                                                                                       \
	X(av_write_frame)                                                                                    \
	X(av_write_trailer)                                                                                  \
	X(avcodec_alloc_context3)                                                                            \
	X(avcodec_descriptor_get)                                                                            \
	X(avcodec_find_encoder)                                                                              \
	X(avcodec_find_encoder_by_name)                                                                      \
	X(avcodec_flush_buffers)                                                                             \
	X(avcodec_free_context)                                                                              \
	X(avcodec_get_name)                                                                                  \
	X(avcodec_open2)                                                                                     \
	X(avcodec_parameters_copy)                                                                           \
	X(avcodec_parameters_from_context)                                                                   \
	X(avcodec_parameters_to_context)                                                                     \
	X(avcodec_receive_frame)                                                                             \
	X(avcodec_receive_packet)                                                                            \
	X(avcodec_send_frame)                                                                                \
	X(avcodec_send_packet)                                                                               \
	X(avformat_alloc_context)                                                                            \
	X(avformat_alloc_output_context2)                                                                    \
	X(avformat_close_input)                                                                              \
	X(avformat_find_stream_info)                                                                         \
	X(avformat_free_context)                                                                             \
	X(avformat_new_stream)                                                                               \
	X(avformat_open_input)                                                                               \
	X(avformat_seek_file)                                                                                \
	X(avformat_write_header)                                                                             \
	X(avio_closep)                                                                                       \
	X(avio_open)                                                                                         \
	X(sws_alloc_context)                                                                                 \
	X(sws_init_context)                                                                                  \
	X(sws_scale)                                                                                         \
	X(sws_freeContext)                                                                                   \
	X(sws_getCoefficients)                                                                               \
	X(sws_getContext)                                                                                    \
	X(sws_setColorspaceDetails)

typedef struct {
#define WL_AV_MEMBER(name) __typeof__(&name) name;
	WL_AV_FUNCS(WL_AV_MEMBER)
#undef WL_AV_MEMBER
} wl_av_table;

/* Filled by wl_av_load; read-only afterwards. */
extern wl_av_table wl_av_fn;

/* Opens libavutil, libavcodec, libavformat and libswscale (the sonames of
 * the headers wakeline was built with) and fills wl_av_fn, once per process
 * (thread-safe).  WL_EIO with a message naming the missing library or
 * function and the Debian package to install. */
wl_status wl_av_load(wl_err *err);

/* From here on, each name is a call through the table (but in av.c,
 * which fills it). */
#ifndef WL_AV_NO_REDIRECT
#define av_bsf_alloc (wl_av_fn.av_bsf_alloc)
#define av_bsf_free (wl_av_fn.av_bsf_free)
#define av_bsf_get_by_name (wl_av_fn.av_bsf_get_by_name)
#define av_bsf_init (wl_av_fn.av_bsf_init)
#define av_bsf_receive_packet (wl_av_fn.av_bsf_receive_packet)
#define av_bsf_send_packet (wl_av_fn.av_bsf_send_packet)
#define av_d2q (wl_av_fn.av_d2q)
#define av_dict_copy (wl_av_fn.av_dict_copy)
#define av_dict_free (wl_av_fn.av_dict_free)
#define av_dict_get (wl_av_fn.av_dict_get)
#define av_dict_set (wl_av_fn.av_dict_set)
#define av_display_rotation_get (wl_av_fn.av_display_rotation_get)
#define av_display_rotation_set (wl_av_fn.av_display_rotation_set)
#define av_find_best_stream (wl_av_fn.av_find_best_stream)
#define av_find_input_format (wl_av_fn.av_find_input_format)
#define av_frame_alloc (wl_av_fn.av_frame_alloc)
#define av_frame_free (wl_av_fn.av_frame_free)
#define av_frame_get_buffer (wl_av_fn.av_frame_get_buffer)
#define av_frame_make_writable (wl_av_fn.av_frame_make_writable)
#define av_frame_unref (wl_av_fn.av_frame_unref)
#define av_free (wl_av_fn.av_free)
#define av_get_pix_fmt_name (wl_av_fn.av_get_pix_fmt_name)
#define av_guess_frame_rate (wl_av_fn.av_guess_frame_rate)
#define av_interleaved_write_frame (wl_av_fn.av_interleaved_write_frame)
#define av_log_get_level (wl_av_fn.av_log_get_level)
#define av_log_set_level (wl_av_fn.av_log_set_level)
#define av_malloc (wl_av_fn.av_malloc)
#define av_mallocz (wl_av_fn.av_mallocz)
#define av_opt_set_int (wl_av_fn.av_opt_set_int)
#define av_packet_alloc (wl_av_fn.av_packet_alloc)
#define av_packet_clone (wl_av_fn.av_packet_clone)
#define av_packet_free (wl_av_fn.av_packet_free)
#define av_packet_get_side_data (wl_av_fn.av_packet_get_side_data)
#define av_packet_ref (wl_av_fn.av_packet_ref)
#define av_packet_rescale_ts (wl_av_fn.av_packet_rescale_ts)
#define av_packet_unref (wl_av_fn.av_packet_unref)
#define av_pix_fmt_desc_get (wl_av_fn.av_pix_fmt_desc_get)
#define av_read_frame (wl_av_fn.av_read_frame)
#define av_seek_frame (wl_av_fn.av_seek_frame)
#define av_stream_add_side_data (wl_av_fn.av_stream_add_side_data)
#define av_stream_get_side_data (wl_av_fn.av_stream_get_side_data)
#define av_strerror (wl_av_fn.av_strerror)
#define av_write_frame (wl_av_fn.av_write_frame)
#define av_write_trailer (wl_av_fn.av_write_trailer)
#define avcodec_alloc_context3 (wl_av_fn.avcodec_alloc_context3)
#define avcodec_descriptor_get (wl_av_fn.avcodec_descriptor_get)
#define avcodec_find_encoder (wl_av_fn.avcodec_find_encoder)
#define avcodec_find_encoder_by_name (wl_av_fn.avcodec_find_encoder_by_name)
#define avcodec_flush_buffers (wl_av_fn.avcodec_flush_buffers)
#define avcodec_free_context (wl_av_fn.avcodec_free_context)
#define avcodec_get_name (wl_av_fn.avcodec_get_name)
#define avcodec_open2 (wl_av_fn.avcodec_open2)
#define avcodec_parameters_copy (wl_av_fn.avcodec_parameters_copy)
#define avcodec_parameters_from_context (wl_av_fn.avcodec_parameters_from_context)
#define avcodec_parameters_to_context (wl_av_fn.avcodec_parameters_to_context)
#define avcodec_receive_frame (wl_av_fn.avcodec_receive_frame)
#define avcodec_receive_packet (wl_av_fn.avcodec_receive_packet)
#define avcodec_send_frame (wl_av_fn.avcodec_send_frame)
#define avcodec_send_packet (wl_av_fn.avcodec_send_packet)
#define avformat_alloc_context (wl_av_fn.avformat_alloc_context)
#define avformat_alloc_output_context2 (wl_av_fn.avformat_alloc_output_context2)
#define avformat_close_input (wl_av_fn.avformat_close_input)
#define avformat_find_stream_info (wl_av_fn.avformat_find_stream_info)
#define avformat_free_context (wl_av_fn.avformat_free_context)
#define avformat_new_stream (wl_av_fn.avformat_new_stream)
#define avformat_open_input (wl_av_fn.avformat_open_input)
#define avformat_seek_file (wl_av_fn.avformat_seek_file)
#define avformat_write_header (wl_av_fn.avformat_write_header)
#define avio_closep (wl_av_fn.avio_closep)
#define avio_open (wl_av_fn.avio_open)
#define sws_alloc_context (wl_av_fn.sws_alloc_context)
#define sws_init_context (wl_av_fn.sws_init_context)
#define sws_scale (wl_av_fn.sws_scale)
#define sws_freeContext (wl_av_fn.sws_freeContext)
#define sws_getCoefficients (wl_av_fn.sws_getCoefficients)
#define sws_getContext (wl_av_fn.sws_getContext)
#define sws_setColorspaceDetails (wl_av_fn.sws_setColorspaceDetails)
#endif

#endif
