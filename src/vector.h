/* vector.h - marks for the loops over blocks of paths.
 *
 * Include after <config.h>.  ITOX_VECTOR marks a function whose loops should
 * also be compiled for AVX2 and AVX-512 machines, the copy chosen when the
 * program starts (configure: --disable-vector-clones); every copy does the
 * same floating-point operations in the same order (configure turns off
 * contraction into FMA), so results do not depend on the machine.  Put it
 * on static functions only: clang calls a multiversioned function through
 * its resolver only where the attribute is seen, so a call from another file
 * would not link.
 * ITOX_INDEPENDENT before a loop says that its arrays do not overlap, so
 * the compiler need not check before vectorising (GCC's ivdep, clang's
 * assume_safety).
 */
#ifndef ITOX_VECTOR_H
#define ITOX_VECTOR_H

#if defined(HAVE_TARGET_CLONES) && HAVE_TARGET_CLONES
#define ITOX_VECTOR __attribute__((target_clones("arch=x86-64-v4", "arch=x86-64-v3", "default")))
#else
#define ITOX_VECTOR
#endif

#if defined(__clang__)
#define ITOX_INDEPENDENT _Pragma("clang loop vectorize(assume_safety)")
#elif defined(__GNUC__)
#define ITOX_INDEPENDENT _Pragma("GCC ivdep")
#else
#define ITOX_INDEPENDENT
#endif

#endif
