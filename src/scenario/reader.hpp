// Reading helpers for scenario files: typed access to TOML tables with the error messages of
// heraldry::InputError (file, line, dotted key, value as written, what was expected).
// Internal to src/scenario: the only place that knows toml++.
#pragma once

#include <cstddef>
#include <cstdint>
#include <initializer_list>
#include <limits>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include <toml++/toml.h>

#include "heraldry/scenario.hpp"
#include "scenario/suggest.hpp"

namespace heraldry::scenario::detail {

/// Throws InputError(file, line, key, value, expected, hint); the one place that builds it.
[[noreturn]] void raise(const std::string& file, int line, const std::string& key, const std::string& value,
                        const std::string& expected, const std::string& hint = {});

/// Compact decimal form of a number (%g): 1e-10, 0.01, 400.
std::string format_number(double x);

/// An interval of allowed values; every bound also requires a finite number.
struct Bounds {
  double lo = -std::numeric_limits<double>::infinity();
  double hi = std::numeric_limits<double>::infinity();
  bool lo_open = false;
  bool hi_open = false;

  static Bounds any() { return {}; }
  static Bounds above(double x) { return {x, std::numeric_limits<double>::infinity(), true, false}; }
  static Bounds at_least(double x) { return {x, std::numeric_limits<double>::infinity(), false, false}; }
  static Bounds closed(double a, double b) { return {a, b, false, false}; }

  bool contains(double x) const;
  /// "in [0, 1]", "in (0, 1]", "> 0", ">= 0", or "" (any finite number).
  std::string text() const;
  /// "a number in [0, 1]" (or "a number" without bounds).
  std::string number_text() const;
};

/// A parsed document and the text it came from. Syntax errors become InputError with key
/// "<syntax>". Lines are 1-based; columns of toml++ count code points, not bytes.
class Document {
public:
  Document(std::string_view text, std::string file);

  const toml::table& root() const { return root_; }
  const std::string& file() const { return file_; }

  static int line(const toml::node& n) { return static_cast<int>(n.source().begin.line); }
  /// The value as the user wrote it: scalars verbatim from the text (strings with their
  /// quotes), inline tables and arrays re-assembled from their elements in file order,
  /// header tables and arrays of tables as "" (the message then shows no value).
  std::string written(const toml::node& n) const;

  [[noreturn]] void fail(int line, const std::string& key, const std::string& value,
                         const std::string& expected, const std::string& hint = {}) const;
  [[noreturn]] void fail_at(const toml::node& n, const std::string& key,
                            const std::string& expected, const std::string& hint = {}) const {
    fail(line(n), key, written(n), expected, hint);
  }

private:
  std::string slice(const toml::source_region& r) const;

  std::string file_;
  std::string text_;
  std::vector<std::string_view> lines_;
  toml::table root_;
};

/// One TOML table seen through its dotted path. Getters return nothing for an absent key and
/// throw InputError for a present key of the wrong type or out of bounds.
class Table {
public:
  Table(const Document& doc, const toml::table& t, std::string path, int line)
      : doc_(&doc), t_(&t), path_(std::move(path)), line_(line) {}

  const Document& doc() const { return *doc_; }
  const toml::table& raw() const { return *t_; }
  const std::string& path() const { return path_; }
  int line() const { return line_; }
  /// The dotted key of a member: "counters.lab" + "efficiency" -> "counters.lab.efficiency".
  std::string key(std::string_view member) const;
  const toml::node* find(std::string_view member) const;
  bool has(std::string_view member) const { return find(member) != nullptr; }
  /// The members in file order (toml++ keeps them sorted by name).
  std::vector<std::pair<std::string_view, const toml::node*>> members() const;

  /// Rejects the first member (in file order) outside `known`; the hint names the closest one.
  void only(const std::vector<std::string_view>& known) const;

  [[noreturn]] void missing(std::string_view member, const std::string& expected) const;
  [[noreturn]] void fail(std::string_view member, const std::string& expected,
                         const std::string& hint = {}) const;

  std::optional<double> number(std::string_view member, const Bounds& b) const;
  double number_or(std::string_view member, const Bounds& b, double fallback) const;
  double required_number(std::string_view member, const Bounds& b) const;

  /// An integer in [lo, hi] (a TOML integer: 3.0 is refused); hi >= INT_MAX reads ">= lo".
  std::optional<std::int64_t> integer(std::string_view member, std::int64_t lo, std::int64_t hi) const;

  std::optional<std::string> string(std::string_view member) const;
  /// A string among `allowed`; returns its index.
  std::optional<std::size_t> choice(std::string_view member,
                                    const std::vector<std::string_view>& allowed) const;

  /// A number, a non-empty list of numbers, or { from, to, points [, scale] } (inclusive;
  /// scale = "linear" (default) or "log" (geometric, from > 0)). Every value within `b`.
  /// With `tunable`, also { tune = [lo, hi] } (lo < hi, both within `b`): a Param whose `tune`
  /// holds the range and whose single value is the midpoint; without it, such a table is refused
  /// with a hint saying where tune ranges are allowed.
  std::optional<Param> param(std::string_view member, const Bounds& b, bool tunable = false) const;
  Param required_param(std::string_view member, const Bounds& b, bool tunable = false) const;

  /// The range of a `{ tune = [lo, hi] }` table (this table): exactly the key `tune`, two
  /// numbers within `b`, lo < hi.
  std::pair<double, double> tune_range(const Bounds& b) const;

  /// A sub-table (header or inline); a present member of another type is an error.
  std::optional<Table> table(std::string_view member) const;

private:
  const Document* doc_;
  const toml::table* t_;
  std::string path_;
  int line_;
};

/// "a", "b", or "a", "b" and "c": allowed values quoted and joined for messages.
std::string quoted_list(const std::vector<std::string_view>& allowed);
/// a, b or c: names joined for messages (no quotes).
std::string plain_list(const std::vector<std::string_view>& names);

}  // namespace heraldry::scenario::detail
