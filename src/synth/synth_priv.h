/* synth_priv.h: helpers shared by the renderer's files (not a public API). */
#ifndef WL_SYNTH_PRIV_H
#define WL_SYNTH_PRIV_H

#include <stdint.h>

#include "core/angle.h"

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

#endif
