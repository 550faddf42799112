// Programming errors: a broken invariant stops the program with file:line. Bad input
// and numerical trouble never come here; they are returned as values.
#pragma once

#include <cstdio>
#include <cstdlib>

#define KNEE_CHECK(condition)                                                            \
  do {                                                                                   \
    if (!(condition)) {                                                                  \
      std::fprintf(stderr, "%s:%d: check failed: %s\n", __FILE__, __LINE__, #condition); \
      std::abort();                                                                      \
    }                                                                                    \
  } while (false)
