#include "version.h"

namespace knee::cli {
const char* Version() { return "0.1.0"; }
}  // namespace knee::cli
