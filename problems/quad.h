/* quad.h — the few functions of gcc's libquadmath (IEEE binary128, 113-bit significand)
 * that problem setups use to evaluate the closed form of the state actually started
 * when double precision would lose the digits that set its period (next to a
 * separatrix). Declared here rather than through <quadmath.h>, which lives in gcc's
 * private include folder where other compilers (clang, for the fuzz build) do not look;
 * the library itself is found by both. Setup only: never in a loop that steps. */
#ifndef DM_QUAD_H
#define DM_QUAD_H

typedef __float128 dm_quad;

dm_quad expq(dm_quad x);

#endif
