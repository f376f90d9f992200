/* synth_priv.h: helpers shared by the renderer's files (not a public API). */
#ifndef WL_SYNTH_PRIV_H
#define WL_SYNTH_PRIV_H

#include <stdint.h>

#include "core/angle.h"
#include "synth/synth.h"

/* splitmix64's finaliser (Steele, Lea & Flood 2014) as a counter-based hash. */
static inline uint64_t synth_mix64(uint64_t z)
{
	z += 0x9e3779b97f4a7c15ull;
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
	z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
	return z ^ (z >> 31);
}

/* A uniform number in [0, 1) from a hash. */
static inline double synth_unit(uint64_t h)
{
	return (double)(h >> 11) / 9007199254740992.0;
}

/* hazard.c: the pixel bounds (lohi: min u, min v, max u, max v, grown in
 * place) of the 24-gon circumscribing an ellipse (axes sx, sy) on the
 * plane z; 0 when a point is behind the camera.  Then the inclusive pixel
 * box with a 3 px margin, cut to the image; 0 when empty. */
int synth_project_ellipse(const wl_camera *cam, double cx, double cy, double z, double sx, double sy,
                          double lohi[4]);
int synth_finish_box(const double lohi[4], int w, int h, int box[4]);

/* hazard.c: what real water and phones add, drawn over the robots */
void synth_draw_occluders(const wl_synth_scene *sc, int ss, double t, uint8_t *rgb, int stride);
void synth_add_spots(const wl_synth_scene *sc, double t, uint8_t *rgb, int stride);

#endif
