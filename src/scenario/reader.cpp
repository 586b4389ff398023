#include "scenario/reader.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>
#include <tuple>

namespace heraldry::scenario::detail {

std::size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> prev(b.size() + 1), cur(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) prev[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    cur[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t subst = prev[j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1);
      cur[j] = std::min({prev[j] + 1, cur[j - 1] + 1, subst});
    }
    std::swap(prev, cur);
  }
  return prev[b.size()];
}

std::optional<std::string> closest(std::string_view unknown,
                                   const std::vector<std::string_view>& known) {
  const auto lower = [](std::string_view v) {
    std::string s(v);
    for (char& c : s)
      if (c >= 'A' && c <= 'Z') c = static_cast<char>(c - 'A' + 'a');
    return s;
  };
  const std::string u = lower(unknown);
  const std::size_t limit = std::max<std::size_t>(2, unknown.size() / 3);
  std::optional<std::string> best;
  std::size_t best_d = limit + 1;
  for (auto k : known) {
    const std::size_t d = edit_distance(u, lower(k));
    // A candidate that must be rewritten entirely ("c" -> "a") is no suggestion.
    if (d < best_d && d < std::max(unknown.size(), k.size())) {
      best_d = d;
      best = std::string(k);
    }
  }
  return best;
}

std::string format_number(double x) {
  char buf[40];
  // Large powers of ten as 1e7 (not 10000000 or 1e+07): the bounds of the scenario keys.
  const double e = std::abs(x) >= 1e5 ? std::round(std::log10(std::abs(x))) : 0.0;
  if (e != 0.0 && std::abs(x) == std::pow(10.0, e)) {
    std::snprintf(buf, sizeof buf, "%se%d", x < 0 ? "-1" : "1", static_cast<int>(e));
    return buf;
  }
  std::snprintf(buf, sizeof buf, "%.10g", x);
  return buf;
}

std::string quoted_list(const std::vector<std::string_view>& allowed) {
  std::string s;
  for (std::size_t i = 0; i < allowed.size(); ++i) {
    if (i > 0) s += (i + 1 == allowed.size()) ? " or " : ", ";
    s += '"';
    s += allowed[i];
    s += '"';
  }
  return s;
}

std::string plain_list(const std::vector<std::string_view>& names) {
  std::string s;
  for (std::size_t i = 0; i < names.size(); ++i) {
    if (i > 0) s += (i + 1 == names.size()) ? " or " : ", ";
    s += names[i];
  }
  return s;
}

// ------------------------------------------------------------------------------------ Bounds

bool Bounds::contains(double x) const {
  if (!std::isfinite(x)) return false;
  if (lo_open ? !(x > lo) : !(x >= lo)) return false;
  if (hi_open ? !(x < hi) : !(x <= hi)) return false;
  return true;
}

std::string Bounds::text() const {
  const bool has_lo = std::isfinite(lo), has_hi = std::isfinite(hi);
  if (has_lo && has_hi)
    return std::string("in ") + (lo_open ? "(" : "[") + format_number(lo) + ", " + format_number(hi) +
           (hi_open ? ")" : "]");
  if (has_lo) return std::string(lo_open ? "> " : ">= ") + format_number(lo);
  if (has_hi) return std::string(hi_open ? "< " : "<= ") + format_number(hi);
  return {};
}

std::string Bounds::number_text() const {
  const std::string t = text();
  return t.empty() ? std::string("a number") : "a number " + t;
}

// ---------------------------------------------------------------------------------- Document

void raise(const std::string& file, int line, const std::string& key, const std::string& value,
           const std::string& expected, const std::string& hint) {
  throw InputError(file, line, key, value, expected, hint);
}

namespace {

// toml++ 3.3 (the Debian 12 package) reaches a branch marked unreachable (undefined behaviour)
// when it asks whether certain non-ASCII code points are whitespace (U+00A1..U+0499 among
// others, e.g. 'e' with an accent in a bare key). It asks only outside strings and comments,
// and after a backslash inside basic strings. TOML 1.0 allows no non-ASCII character outside
// strings and comments and no non-ASCII escape, so refusing those bytes before the parser sees
// them refuses no valid TOML, except a non-ASCII character right after a line-ending backslash
// in a multi-line string, which we refuse as a limitation of the reader. Found by fuzzing
// (fuzz/fuzz_scenario.cpp).
void refuse_bytes_the_parser_mishandles(std::string_view text, const std::string& file) {
  enum class In { code, comment, basic, multi_basic, literal, multi_literal };
  In in = In::code;
  int line = 1;
  auto non_ascii = [](char c) { return (static_cast<unsigned char>(c) & 0x80) != 0; };
  auto refuse = [&](const char* why) { raise(file, line, "<syntax>", "", "valid TOML", why); };
  auto starts = [&](std::size_t i, std::string_view s) { return text.substr(i, s.size()) == s; };
  std::size_t i = starts(0, "\xEF\xBB\xBF") ? 3 : 0;  // a UTF-8 byte-order mark is allowed
  while (i < text.size()) {
    const char c = text[i];
    if (c == '\n') ++line;
    switch (in) {
      case In::code:
        if (non_ascii(c)) refuse("a non-ASCII character outside a quoted string or a comment");
        if (c == '#') in = In::comment;
        if (c == '"') in = starts(i, "\"\"\"") ? (i += 2, In::multi_basic) : In::basic;
        if (c == '\'') in = starts(i, "'''") ? (i += 2, In::multi_literal) : In::literal;
        break;
      case In::comment:
        if (c == '\n') in = In::code;
        break;
      case In::literal:
        if (c == '\'' || c == '\n') in = In::code;
        break;
      case In::multi_literal:
        if (starts(i, "'''")) {
          i += 2;
          while (i + 1 < text.size() && text[i + 1] == '\'') ++i;  // up to two quotes before the closing ones
          in = In::code;
        }
        break;
      case In::basic:
      case In::multi_basic:
        if (c == '\\') {
          if (i + 1 < text.size() && non_ascii(text[i + 1])) refuse("a non-ASCII character after a backslash");
          if (in == In::multi_basic && i + 1 < text.size() &&
              (text[i + 1] == ' ' || text[i + 1] == '\t' || text[i + 1] == '\r' || text[i + 1] == '\n')) {
            // A line-ending backslash: the parser skips the whitespace that follows.
            while (i + 1 < text.size() &&
                   (text[i + 1] == ' ' || text[i + 1] == '\t' || text[i + 1] == '\r' || text[i + 1] == '\n')) {
              if (text[i + 1] == '\n') ++line;
              ++i;
            }
            if (i + 1 < text.size() && non_ascii(text[i + 1]))
              refuse("an ASCII character first after a line-ending backslash (a limitation of the TOML reader)");
          } else {
            ++i;  // the escaped character
          }
        } else if (in == In::basic && (c == '"' || c == '\n')) {
          in = In::code;
        } else if (in == In::multi_basic && starts(i, "\"\"\"")) {
          i += 2;
          while (i + 1 < text.size() && text[i + 1] == '"') ++i;
          in = In::code;
        }
        break;
    }
    ++i;
  }
}

}  // namespace

Document::Document(std::string_view text, std::string file) : file_(std::move(file)), text_(text) {
  std::string_view rest = text_;
  while (true) {
    const auto nl = rest.find('\n');
    lines_.push_back(rest.substr(0, nl));
    if (nl == std::string_view::npos) break;
    rest.remove_prefix(nl + 1);
  }
  refuse_bytes_the_parser_mishandles(text_, file_);
  try {
    root_ = toml::parse(text_, std::string_view(file_));
  } catch (const toml::parse_error& e) {
    raise(file_, static_cast<int>(e.source().begin.line), "<syntax>", "", "valid TOML",
          std::string(e.description()));
  }
}

void Document::fail(int line, const std::string& key, const std::string& value,
                    const std::string& expected, const std::string& hint) const {
  raise(file_, line, key, value, expected, hint);
}

namespace {

// Byte offset of a 1-based code-point column in a UTF-8 line.
std::size_t byte_of_column(std::string_view line, std::size_t column) {
  std::size_t cp = 0;
  for (std::size_t i = 0; i < line.size(); ++i) {
    if ((static_cast<unsigned char>(line[i]) & 0xC0) == 0x80) continue;  // continuation byte
    if (++cp == column) return i;
  }
  return line.size();
}

std::string key_as_written(std::string_view k) {
  const bool bare = !k.empty() && std::all_of(k.begin(), k.end(), [](char c) {
    return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '_' ||
           c == '-';
  });
  if (bare) return std::string(k);
  std::string q = "\"";
  q += k;
  return q + "\"";
}

bool before(const toml::source_position& a, const toml::source_position& b) {
  return std::tie(a.line, a.column) < std::tie(b.line, b.column);
}

}  // namespace

std::string Document::slice(const toml::source_region& r) const {
  if (r.begin.line == 0 || r.begin.line != r.end.line || r.begin.line > lines_.size()) return {};
  const std::string_view line = lines_[r.begin.line - 1];
  const std::size_t b = byte_of_column(line, r.begin.column);
  const std::size_t e = byte_of_column(line, r.end.column);
  if (e <= b) return {};
  return std::string(line.substr(b, e - b));
}

std::string Document::written(const toml::node& n) const {
  if (const auto* t = n.as_table()) {
    if (!t->is_inline()) return {};
    std::vector<std::pair<const toml::key*, const toml::node*>> kv;
    for (auto&& [k, v] : *t) kv.emplace_back(&k, &v);
    std::sort(kv.begin(), kv.end(),
              [](const auto& x, const auto& y) { return before(x.first->source().begin, y.first->source().begin); });
    if (kv.empty()) return "{}";
    std::string s = "{ ";
    for (std::size_t i = 0; i < kv.size(); ++i) {
      if (i > 0) s += ", ";
      s += key_as_written(kv[i].first->str()) + " = " + written(*kv[i].second);
    }
    return s + " }";
  }
  if (const auto* a = n.as_array()) {
    if (!a->empty() && a->is_array_of_tables() && !a->front().as_table()->is_inline()) return {};
    std::string s = "[";
    for (std::size_t i = 0; i < a->size(); ++i) {
      if (i > 0) s += ", ";
      s += written(*a->get(i));
    }
    return s + "]";
  }
  std::string s = slice(n.source());
  if (!s.empty()) return s;
  // A value spanning lines (a multi-line string): shown as a basic string.
  if (const auto* str = n.as_string()) {
    std::string q = "\"";
    for (char c : str->get()) {
      if (c == '"' || c == '\\') q += '\\', q += c;
      else if (c == '\n') q += "\\n";
      else q += c;
    }
    return q + "\"";
  }
  std::ostringstream os;
  n.visit([&os](const auto& v) {
    if constexpr (toml::is_value<decltype(v)>) os << v;
  });
  return os.str();
}

// ------------------------------------------------------------------------------------- Table

std::string Table::key(std::string_view member) const {
  return path_.empty() ? std::string(member) : path_ + "." + std::string(member);
}

const toml::node* Table::find(std::string_view member) const { return t_->get(member); }

std::vector<std::pair<std::string_view, const toml::node*>> Table::members() const {
  std::vector<std::tuple<toml::source_position, std::string_view, const toml::node*>> m;
  for (auto&& [k, v] : *t_) m.emplace_back(k.source().begin, k.str(), &v);
  std::sort(m.begin(), m.end(),
            [](const auto& x, const auto& y) { return before(std::get<0>(x), std::get<0>(y)); });
  std::vector<std::pair<std::string_view, const toml::node*>> out;
  for (auto& [pos, k, v] : m) out.emplace_back(k, v);
  return out;
}

void Table::only(const std::vector<std::string_view>& known) const {
  std::vector<std::tuple<toml::source_position, const toml::key*, const toml::node*>> m;
  for (auto&& [k, v] : *t_)
    if (std::find(known.begin(), known.end(), k.str()) == known.end()) m.emplace_back(k.source().begin, &k, &v);
  if (m.empty()) return;
  const auto first = std::min_element(
      m.begin(), m.end(), [](const auto& x, const auto& y) { return before(std::get<0>(x), std::get<0>(y)); });
  const auto& [pos, k, v] = *first;
  const auto near = closest(k->str(), known);
  doc_->fail(static_cast<int>(pos.line), key(k->str()), doc_->written(*v), "one of the keys " + plain_list(known),
             near ? "did you mean '" + *near + "'?" : std::string());
}

void Table::missing(std::string_view member, const std::string& expected) const {
  doc_->fail(line_, key(member), "", expected);
}

void Table::fail(std::string_view member, const std::string& expected, const std::string& hint) const {
  const toml::node* n = find(member);
  if (n == nullptr) doc_->fail(line_, key(member), "", expected, hint);
  doc_->fail_at(*n, key(member), expected, hint);
}

std::optional<double> Table::number(std::string_view member, const Bounds& b) const {
  const toml::node* n = find(member);
  if (n == nullptr) return std::nullopt;
  if (n->is_array() || n->is_table())
    doc_->fail_at(*n, key(member), b.number_text(),
                  "this key takes one value: it cannot be swept; README \"Sweepable keys\" lists those that can");
  if (!n->is_number()) doc_->fail_at(*n, key(member), b.number_text());
  const double x = n->value<double>().value_or(std::nan(""));
  if (!b.contains(x)) doc_->fail_at(*n, key(member), b.number_text());
  return x;
}

double Table::number_or(std::string_view member, const Bounds& b, double fallback) const {
  return number(member, b).value_or(fallback);
}

double Table::required_number(std::string_view member, const Bounds& b) const {
  const auto x = number(member, b);
  if (!x) missing(member, b.number_text());
  return *x;
}

std::optional<std::int64_t> Table::integer(std::string_view member, std::int64_t lo, std::int64_t hi) const {
  const toml::node* n = find(member);
  if (n == nullptr) return std::nullopt;
  const std::string expected = hi >= std::numeric_limits<int>::max()
                                   ? "an integer >= " + std::to_string(lo)
                                   : "an integer in [" + std::to_string(lo) + ", " + std::to_string(hi) + "]";
  if (!n->is_integer()) doc_->fail_at(*n, key(member), expected);
  const std::int64_t v = n->as_integer()->get();
  if (v < lo || v > hi) doc_->fail_at(*n, key(member), expected);
  return v;
}

std::optional<std::string> Table::string(std::string_view member) const {
  const toml::node* n = find(member);
  if (n == nullptr) return std::nullopt;
  if (!n->is_string()) doc_->fail_at(*n, key(member), "a string");
  return n->as_string()->get();
}

std::optional<std::size_t> Table::choice(std::string_view member,
                                         const std::vector<std::string_view>& allowed) const {
  const toml::node* n = find(member);
  if (n == nullptr) return std::nullopt;
  if (n->is_string()) {
    const std::string& s = n->as_string()->get();
    for (std::size_t i = 0; i < allowed.size(); ++i)
      if (s == allowed[i]) return i;
    const auto near = closest(s, allowed);
    doc_->fail_at(*n, key(member), quoted_list(allowed), near ? "did you mean \"" + *near + "\"?" : std::string());
  }
  doc_->fail_at(*n, key(member), quoted_list(allowed));
}

std::optional<Param> Table::param(std::string_view member, const Bounds& b, bool tunable) const {
  const toml::node* n = find(member);
  if (n == nullptr) return std::nullopt;
  const std::string k = key(member);
  const std::string general =
      b.number_text() + ", a non-empty list of such numbers or a { from, to, points } table" +
      (tunable ? " or { tune = [lo, hi] }" : "");
  Param p;
  if (n->is_number()) {
    const double x = n->value<double>().value_or(std::nan(""));
    if (!b.contains(x)) doc_->fail_at(*n, k, b.number_text());
    p.values.push_back(x);
    return p;
  }
  if (const auto* a = n->as_array()) {
    if (a->empty()) doc_->fail_at(*n, k, general);
    for (std::size_t i = 0; i < a->size(); ++i) {
      const toml::node& e = *a->get(i);
      const double x = e.is_number() ? e.value<double>().value_or(std::nan("")) : std::nan("");
      if (!e.is_number() || !b.contains(x)) doc_->fail_at(e, k + "[" + std::to_string(i) + "]", b.number_text());
      p.values.push_back(x);
    }
    return p;
  }
  if (const auto* t = n->as_table()) {
    const Table r(*doc_, *t, k, Document::line(*n));
    if (r.has("tune")) {
      if (!tunable)
        doc_->fail_at(*n, k, general, "tune ranges are for step parameters and [source] squeezing_db");
      p.tune = r.tune_range(b);
      p.values = {0.5 * (p.tune->first + p.tune->second)};
      return p;
    }
    r.only({"from", "to", "points", "scale"});
    const double from = r.required_number("from", Bounds::any());
    const double to = r.required_number("to", Bounds::any());
    const auto points = r.integer("points", 1, 1000000);
    if (!points) r.missing("points", "an integer in [1, 1000000]");
    const bool log = r.choice("scale", {"linear", "log"}).value_or(0) == 1;
    if (!b.contains(from)) r.fail("from", b.number_text());
    if (!b.contains(to)) r.fail("to", b.number_text());
    if (log && !(from > 0.0)) r.fail("from", "a number > 0 with scale = \"log\"");
    if (to < from) r.fail("to", "a number >= from (" + doc_->written(*r.find("from")) + ")");
    if (*points == 1 && to != from) r.fail("points", "an integer >= 2 when to > from");
    if (*points > 1 && to == from) r.fail("points", "1 when from = to");
    const auto count = static_cast<std::size_t>(*points);
    p.values.resize(count);
    for (std::size_t i = 0; i < count; ++i) {
      const double u = count == 1 ? 0.0 : static_cast<double>(i) / static_cast<double>(count - 1);
      // A ratio to/from that overflows (from = 5e-324) is spaced through the logarithms instead.
      const double ratio = to / from;
      p.values[i] = !log                    ? from + (to - from) * u
                    : std::isfinite(ratio) ? from * std::pow(ratio, u)
                                           : std::exp(std::log(from) + u * (std::log(to) - std::log(from)));
      if (!b.contains(p.values[i])) r.fail("points", b.number_text() + " at every point of the range");
    }
    p.values.front() = from;
    p.values.back() = to;
    return p;
  }
  doc_->fail_at(*n, k, general);
}

Param Table::required_param(std::string_view member, const Bounds& b, bool tunable) const {
  auto p = param(member, b, tunable);
  if (!p)
    missing(member, b.number_text() + ", a non-empty list of such numbers or a { from, to, points } table");
  return *p;
}

std::pair<double, double> Table::tune_range(const Bounds& b) const {
  for (const auto& [member, node] : members())
    if (member != "tune") fail(member, "nothing beside tune in a { tune = [lo, hi] } table");
  const toml::node* n = find("tune");
  const std::string k = key("tune");
  const std::string expected = "[lo, hi]: two numbers with lo < hi, each " + b.number_text();
  const toml::array* a = n->as_array();
  if (a == nullptr || a->size() != 2) doc_->fail_at(*n, k, expected);
  double v[2];
  for (std::size_t i = 0; i < 2; ++i) {
    const toml::node& e = *a->get(i);
    v[i] = e.is_number() ? e.value<double>().value_or(std::nan("")) : std::nan("");
    if (!e.is_number() || !b.contains(v[i])) doc_->fail_at(e, k + "[" + std::to_string(i) + "]", b.number_text());
  }
  if (!(v[0] < v[1])) doc_->fail_at(*n, k, expected, "write the lower end first");
  return {v[0], v[1]};
}

std::optional<Table> Table::table(std::string_view member) const {
  const toml::node* n = find(member);
  if (n == nullptr) return std::nullopt;
  if (!n->is_table()) doc_->fail_at(*n, key(member), "a table");
  return Table(*doc_, *n->as_table(), key(member), Document::line(*n));
}

}  // namespace heraldry::scenario::detail
