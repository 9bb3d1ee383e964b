/* clang_compat.h — forced include (-include) of the fuzz build only: glibc's complex.h
 * defines CMPLX only for compilers with __builtin_complex, which clang 14 lacks; clang
 * accepts the initializer-list form of a complex value as a constant expression. */
#ifndef RP_FUZZ_CLANG_COMPAT_H
#define RP_FUZZ_CLANG_COMPAT_H
#ifndef CMPLX
#define CMPLX(x, y) ((double _Complex){(x), (y)})
#endif
#endif
