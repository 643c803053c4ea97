// FUZZ_CHECK: an invariant of a fuzz target. A broken one aborts with the condition and
// its place, which libFuzzer reports as a crash and saves as a reproducer, and which
// fails the replay test in the normal build (where assert may be compiled out).
#pragma once

#include <cstdio>
#include <cstdlib>

#define FUZZ_CHECK(condition)                                                                \
  do {                                                                                       \
    if (!(condition)) {                                                                      \
      std::fprintf(stderr, "%s:%d: invariant broken: %s\n", __FILE__, __LINE__, #condition); \
      std::abort();                                                                          \
    }                                                                                        \
  } while (false)
