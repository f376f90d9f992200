/*
 * image.h: still images for the decode stage: turning a frame into its
 * displayed orientation and writing it as PNG (libavcodec's PNG encoder, so
 * FFmpeg stays inside src/decode).
 *
 * Images are 8-bit, `channels` 1 (gray) or 3 (packed RGB24), rows `stride`
 * bytes apart (stride >= width × channels).
 */
#ifndef WL_IMAGE_H
#define WL_IMAGE_H

#include <stdint.h>

#include "core/err.h"

/* Writes a PNG atomically (core/afile.h).  WL_EINVAL for a bad size or
 * channel count, WL_EDECODE if the encoder fails, WL_EIO naming the path if
 * it cannot be written. */
wl_status wl_png_write(const char *path, const uint8_t *data, int width, int height, int stride, int channels,
                       wl_err *err);

/* Copies a coded w×h image into its displayed orientation (turned rot_deg
 * counter-clockwise, see wl_orient_to_displayed).  dst must hold the
 * displayed size (wl_orient_displayed_size) with rows dst_stride bytes apart;
 * src and dst must not overlap. */
void wl_image_orient(int rot_deg, const uint8_t *src, int w, int h, int stride, int channels, uint8_t *dst,
                     int dst_stride);

#endif
