/* quad.h — the few functions of gcc's libquadmath (IEEE binary128, 113-bit significand)
 * that problems use: setups, to evaluate the closed form of the state actually started
 * when double precision would lose the digits that set its period (next to a
 * separatrix), and the gradients of the reference trajectory (gradient_quad). Declared
 * here rather than through <quadmath.h>, which lives in gcc's private include folder
 * where other compilers (clang, for the fuzz build) do not look; the library itself is
 * found by both. dm_quad is problem.h's: where it is long double, the libm functions of
 * that type stand in. Never in a run's own loop: setups and the reference only. */
#ifndef DM_QUAD_H
#define DM_QUAD_H

#include <math.h>

#include "problem.h"

#if DM_QUAD_IS_FLOAT128
__float128 expq(__float128 x);
__float128 sqrtq(__float128 x);
__float128 sinq(__float128 x);
__float128 cosq(__float128 x);
#define dm_quad_exp expq
#define dm_quad_sqrt sqrtq
#define dm_quad_sin sinq
#define dm_quad_cos cosq
#else
#define dm_quad_exp expl
#define dm_quad_sqrt sqrtl
#define dm_quad_sin sinl
#define dm_quad_cos cosl
#define expq expl
#endif

#endif
