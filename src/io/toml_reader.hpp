// Internal: typed TOML access shared by the readers of scan descriptions, scenarios and trials.
#pragma once

#include <toml++/toml.h>
#include <filesystem>
#include <optional>
#include <set>
#include <string>
#include <vector>

#include "orderband/error.hpp"
#include "orderband/text_file.hpp"

namespace orderband {

/// Typed access to a parsed TOML document with one-line errors naming the file, table and key.
class TomlReader {
 public:
  TomlReader(const toml::table& root, std::string path) : root_(root), path_(std::move(path)) {
    folder_ = std::filesystem::absolute(std::filesystem::path(path_)).parent_path();
  }

  const toml::table* table(const std::string& name, bool required) {
    const toml::node* n = root_.get(name);
    if (!n) {
      if (required) fail(path_, ": missing table [", name, "]");
      return nullptr;
    }
    if (!n->is_table()) fail(path_, ": '", name, "' must be a table [", name, "]");
    return n->as_table();
  }

  void check_keys(const toml::table* t, const std::string& name, const std::set<std::string>& allowed) {
    if (!t) return;
    for (const auto& [k, v] : *t)
      if (!allowed.count(std::string(k.str()))) {
        std::string list;
        for (const auto& a : allowed) list += (list.empty() ? "" : ", ") + a;
        fail(path_, ": unknown key '", k.str(), "' in [", name, "] (known: ", list, ")");
      }
  }

  template <class T>
  std::optional<T> get(const toml::table* t, const std::string& table_name, const std::string& key) {
    if (!t) return std::nullopt;
    const toml::node* n = t->get(key);
    if (!n) return std::nullopt;
    if constexpr (std::is_same_v<T, double>) {
      if (auto v = n->value<double>()) return *v;  // integers convert
      fail(path_, ": [", table_name, "] ", key, " must be a number");
    } else if constexpr (std::is_same_v<T, int64_t>) {
      if (n->is_integer()) return n->value<int64_t>();
      fail(path_, ": [", table_name, "] ", key, " must be an integer");
    } else if constexpr (std::is_same_v<T, bool>) {
      if (n->is_boolean()) return n->value<bool>();
      fail(path_, ": [", table_name, "] ", key, " must be true or false");
    } else {
      if (n->is_string()) return n->value<std::string>();
      fail(path_, ": [", table_name, "] ", key, " must be a string");
    }
  }

  /// A string key that names one of `names`: its index (`fallback` when absent); otherwise one line
  /// `path: [table] key = "x" is not "a", "b" or "c"`.
  size_t choice(const toml::table* t, const std::string& table_name, const std::string& key,
                const std::vector<std::string>& names, size_t fallback) {
    const auto v = get<std::string>(t, table_name, key);
    if (!v) return fallback;
    for (size_t i = 0; i < names.size(); ++i)
      if (*v == names[i]) return i;
    std::string list;
    for (size_t i = 0; i < names.size(); ++i)
      list += (i == 0 ? "" : i + 1 == names.size() ? " or " : ", ") + ("\"" + names[i] + "\"");
    fail(path_, ": [", table_name, "] ", key, " = \"", *v, "\" is not ", list);
  }

  template <class T>
  T require(const toml::table* t, const std::string& table_name, const std::string& key) {
    auto v = get<T>(t, table_name, key);
    if (!v) fail(path_, ": [", table_name, "] needs '", key, "'");
    return *v;
  }

  std::string resolve(const std::string& p) const {
    const std::filesystem::path q(p);
    return (q.is_absolute() ? q : folder_ / q).lexically_normal().string();
  }

  const std::string& path() const { return path_; }
  std::string folder() const { return folder_.string(); }

 private:
  const toml::table& root_;
  std::string path_;
  std::filesystem::path folder_;
};

/// Parses TOML text; syntax errors become one line "path:line: description".
inline toml::table parse_toml_or_fail(const std::string& text, const std::string& path) {
  try {
    return toml::parse(text, path);
  } catch (const toml::parse_error& e) {
    fail(path, ":", e.source().begin.line, ": ", e.description());
  }
}

}  // namespace orderband
