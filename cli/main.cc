#include <cstdio>

#include "version.h"

int main() {
  std::printf("knee %s\n", knee::cli::Version());
  return 0;
}
