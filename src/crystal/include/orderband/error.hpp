// The project's single exception type and the fail() helper that throws it.
#pragma once

#include <sstream>
#include <stdexcept>
#include <string>
#include <utility>

namespace orderband {

/// Every error the library reports. The message is one line, names the
/// offending input and, where possible, says how to fix it.
class Error : public std::runtime_error {
 public:
  explicit Error(const std::string& message) : std::runtime_error(message) {}
};

/// Throws orderband::Error with the arguments streamed into one message.
template <class... Args>
[[noreturn]] void fail(Args&&... args) {
  std::ostringstream os;
  (os << ... << std::forward<Args>(args));
  throw Error(os.str());
}

}  // namespace orderband
