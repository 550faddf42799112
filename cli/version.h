#pragma once

namespace knee::cli {
const char* Version();
}  // namespace knee::cli
