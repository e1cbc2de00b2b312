#pragma once
// Function multiversioning for hot numeric loops: GCC and Clang compile the marked function
// for the baseline x86-64 and for x86-64-v3 (AVX2 + FMA) and pick one at load time, so one
// binary runs everywhere and uses wide vectors where the processor has them.
#if defined(__x86_64__) && defined(__GNUC__) && defined(__linux__) && \
    !defined(__SANITIZE_ADDRESS__) && !defined(__SANITIZE_THREAD__)
#define WVR_VECTOR_CLONES __attribute__((target_clones("arch=x86-64-v3", "default")))
#else
#define WVR_VECTOR_CLONES
#endif
