// The process-wide table behind FileName (knee/result.h).
#include <mutex>
#include <string>
#include <string_view>
#include <unordered_set>

#include "knee/result.h"

namespace knee {
namespace {

struct NameTable {
  std::mutex mutex;
  // Node-based: a stored name keeps its address while others are added.
  std::unordered_set<std::string> names;
};

// Never destroyed, so that a FileName held by another static object stays valid at exit.
NameTable& Table() {
  static NameTable* table = new NameTable;
  return *table;
}

}  // namespace

FileName::FileName(std::string_view name) {
  if (name.empty()) return;
  NameTable& table = Table();
  const std::lock_guard<std::mutex> lock(table.mutex);
  name_ = &*table.names.emplace(name).first;
}

const std::string& FileName::Empty() {
  static const std::string* empty = new std::string;
  return *empty;
}

}  // namespace knee
