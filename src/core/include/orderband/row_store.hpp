// Persistence of per-row results, so that an interrupted run continues where it stopped.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace orderband {

/// Where a stage keeps the results of each finished scan row. A stage asks `load`
/// before computing a row and calls `save` after; rows found are not computed again.
class RowStore {
 public:
  virtual ~RowStore() = default;
  virtual bool load(const std::string& stage, int row, std::vector<uint8_t>& bytes) = 0;
  virtual void save(const std::string& stage, int row, const std::vector<uint8_t>& bytes) = 0;
};

/// Little helpers to pack plain values into bytes and back.
class ByteWriter {
 public:
  template <class T>
  void put(const T& v) {
    const auto* p = reinterpret_cast<const uint8_t*>(&v);
    bytes.insert(bytes.end(), p, p + sizeof(T));
  }
  std::vector<uint8_t> bytes;
};
class ByteReader {
 public:
  explicit ByteReader(const std::vector<uint8_t>& b) : bytes_(b) {}
  template <class T>
  T get() {
    T v{};
    if (pos_ + sizeof(T) > bytes_.size()) throw_short();
    std::copy(bytes_.begin() + pos_, bytes_.begin() + pos_ + sizeof(T), reinterpret_cast<uint8_t*>(&v));
    pos_ += sizeof(T);
    return v;
  }

 private:
  [[noreturn]] void throw_short() const;
  const std::vector<uint8_t>& bytes_;
  size_t pos_ = 0;
};

}  // namespace orderband
