// qualify: what the headers need to know about the build, decided in one place.
// SPDX-License-Identifier: MIT
#pragma once

/// 1 when the code is compiled with exceptions, else 0 (GCC and Clang with -fno-exceptions,
/// MSVC without /EHsc). A host may define it itself. Without exceptions the library still
/// compiles and never throws: a user callback cannot throw then (the compiler refuses a
/// `throw`), so the checks do not catch around callbacks; an allocation failure ends the
/// program as the host's operator new does; SPQR running out of memory makes the sparse
/// check fall back instead of throwing std::bad_alloc.
#ifndef QUALIFY_HAS_EXCEPTIONS
#if defined(__cpp_exceptions) || defined(__EXCEPTIONS) || defined(_CPPUNWIND)
#define QUALIFY_HAS_EXCEPTIONS 1
#else
#define QUALIFY_HAS_EXCEPTIONS 0
#endif
#endif
