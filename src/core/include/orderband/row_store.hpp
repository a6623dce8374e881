// Persistence of per-row results, so that an interrupted run continues where it stopped.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace orderband {

/// Where a stage keeps the results of each finished scan row. A stage asks `load`
/// before computing a row and calls `save` after; rows found are not computed again.
/// A store shared among processes (SharedRowStore) also says which rows this process computes;
/// the others' rows can be loaded once the stage's pass has called `share_rows`.
class RowStore {
 public:
  virtual ~RowStore() = default;
  virtual bool load(const std::string& stage, int row, std::vector<uint8_t>& bytes) = 0;
  virtual void save(const std::string& stage, int row, const std::vector<uint8_t>& bytes) = 0;
  /// Whether this process computes `row` (else another one does).
  virtual bool computes(int /*row*/) const { return true; }
  /// Whether this process computes `row`, another process's, only as the row above its own first
  /// one (a stage that starts a row from the row above then starts it as one process would); the
  /// row's results are replaced by its owner's after the pass.
  virtual bool warms_up(int /*row*/) const { return false; }
  /// After a stage's pass over its rows, in every process together: the rows the others
  /// computed become loadable here.
  virtual void share_rows(const std::string& /*stage*/) {}
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
