// NameTable: the elaboration's one namespace, an open-addressing table of (name, value)
// entries kept in insertion order.
#pragma once

#include <algorithm>
#include <cstdint>
#include <cstring>
#include <functional>
#include <string_view>
#include <utility>
#include <vector>

namespace knee {

// Names are views into the parsed statements, which outlive the table; a million-element
// netlist thus costs one entry and one slot per name, not a heap node and a string copy per
// name. A slot is 32 bits: the entry's index in its low bits (as many as the table's size
// needs) and bits of the name's hash in the rest, so that a probe reads an entry and the
// name's text (both likely cache misses in a large table) nearly only for the name itself:
// a new name then nearly never touches an entry. (At 2^23 slots, a million-stage ladder's,
// 9 bits are left: one occupied slot in 512 passes the bits by chance.)
template <class Value>
class NameTable {
 public:
  // The name's text as a pointer and a 32-bit size in 12 bytes aligned to 4, so that an
  // entry with a 12-byte value is 24 bytes (a pointer member would pad the key to 16; a
  // std::string_view is 16 on its own).
  struct Key {
    unsigned char data[sizeof(const char*)] = {};  // the pointer's bytes
    std::uint32_t size = 0;
    Key() = default;
    Key(std::string_view name)  // NOLINT: a key is written as its name
        : size(static_cast<std::uint32_t>(name.size())) {
      const char* at = name.data();
      std::memcpy(data, &at, sizeof at);
    }
    operator std::string_view() const {  // NOLINT
      const char* at = nullptr;
      std::memcpy(&at, data, sizeof at);
      return {at, size};
    }
  };
  using Entry = std::pair<Key, Value>;
  using iterator = typename std::vector<Entry>::iterator;
  using const_iterator = typename std::vector<Entry>::const_iterator;

  static std::size_t Hash(std::string_view name) { return std::hash<std::string_view>{}(name); }

  // Room for n names without a rehash.
  void reserve(std::size_t n) {
    entries_.reserve(n);
    if (n * 2 > slots_.size()) Rehash(n * 2);
  }
  std::size_t size() const { return entries_.size(); }
  iterator begin() { return entries_.begin(); }
  iterator end() { return entries_.end(); }
  const_iterator begin() const { return entries_.begin(); }
  const_iterator end() const { return entries_.end(); }

  iterator find(std::string_view name) {
    if (slots_.empty()) return end();
    const std::size_t hash = Hash(name);
    const std::size_t s = Probe(name, hash);
    return slots_[s] == 0 ? end() : entries_.begin() + EntryOf(slots_[s]);
  }

  // Asks the memory for the slot where a name of this hash is looked up first, ahead of a
  // try_emplace(name, hash, ...) that would otherwise wait for it.
  void Prefetch(std::size_t hash) const {
    if (!slots_.empty()) __builtin_prefetch(&slots_[hash & (slots_.size() - 1)]);
  }

  // Inserts (name, value) unless the name is present; the iterator is valid until the next
  // insertion.
  std::pair<iterator, bool> try_emplace(std::string_view name, const Value& value) {
    return try_emplace(name, Hash(name), value);
  }
  // The same, with hash == Hash(name) computed ahead.
  std::pair<iterator, bool> try_emplace(std::string_view name, std::size_t hash,
                                        const Value& value) {
    if ((entries_.size() + 1) * 2 > slots_.size()) {
      Rehash(std::max<std::size_t>(16, slots_.size() * 2));
    }
    const std::size_t s = Probe(name, hash);
    if (slots_[s] != 0) return {entries_.begin() + EntryOf(slots_[s]), false};
    entries_.emplace_back(name, value);
    slots_[s] = SlotOf(entries_.size() - 1, hash);
    return {entries_.end() - 1, true};
  }

 private:
  // Slot: 0 when empty, else Bits(hash) | (1 + entry index). The index's field is
  // index_mask_ (it holds up to slots_.size() - 1, and a table holds at most half that many
  // entries); the bits are the hash's from bit 32 up, apart from those that place a slot.
  std::uint32_t Bits(std::size_t hash) const {
    return static_cast<std::uint32_t>(static_cast<std::uint64_t>(hash) >> 32) & ~index_mask_;
  }
  std::uint32_t SlotOf(std::size_t entry, std::size_t hash) const {
    return Bits(hash) | static_cast<std::uint32_t>(entry + 1);
  }
  std::size_t EntryOf(std::uint32_t slot) const { return (slot & index_mask_) - 1; }

  // The slot that holds `name`, or the empty slot where it belongs.
  std::size_t Probe(std::string_view name, std::size_t hash) const {
    const std::size_t mask = slots_.size() - 1;
    const std::uint32_t bits = Bits(hash);
    for (std::size_t s = hash & mask;; s = (s + 1) & mask) {
      const std::uint32_t slot = slots_[s];
      if (slot == 0) return s;
      if ((slot & ~index_mask_) == bits &&
          std::string_view(entries_[EntryOf(slot)].first) == name) {
        return s;
      }
    }
  }

  void Rehash(std::size_t at_least) {
    std::size_t size = 16;
    while (size < at_least) size *= 2;
    slots_.assign(size, 0);
    const std::size_t mask = size - 1;
    index_mask_ = static_cast<std::uint32_t>(std::min<std::size_t>(mask, 0xFFFFFFFF));
    for (std::size_t i = 0; i < entries_.size(); ++i) {
      const std::size_t hash = Hash(entries_[i].first);
      std::size_t s = hash & mask;
      while (slots_[s] != 0) s = (s + 1) & mask;
      slots_[s] = SlotOf(i, hash);
    }
  }

  std::vector<Entry> entries_;
  std::vector<std::uint32_t> slots_;
  std::uint32_t index_mask_ = 0;
};

}  // namespace knee
