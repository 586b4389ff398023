// Small vocabulary shared by every module: modes, unit conversions, error channels.
#pragma once

#include <atomic>

#include <cmath>
#include <cstdio>
#include <numbers>
#include <stdexcept>
#include <string>

namespace heraldry {

/// The two modes of the entangled pair. Mode A is Alice's (stays home in the one-way geometry),
/// mode B is Bob's.
enum class Mode { A, B };

inline const char* to_string(Mode m) { return m == Mode::A ? "a" : "b"; }

/// Squeezing parameter r from the squeezing in dB, S_dB = 10 log10(e^{2r}) (convention of
/// docs/physics.md §1.1: the squeezing parameter, not the noisy EPR variance).
inline double squeezing_parameter_from_db(double db) { return db * std::numbers::ln10 / 20.0; }
inline double squeezing_db_from_parameter(double r) { return r * 20.0 / std::numbers::ln10; }

/// A memory size in MiB (2^20 bytes) for messages, e.g. "5.5 MiB": the one unit of memory the
/// tool prints and reads (`max_memory_mb` is in MiB too).
inline std::string mebibytes(double bytes) {
  char buf[48];
  std::snprintf(buf, sizeof buf, "%.4g MiB", bytes / 1048576.0);
  return buf;
}
inline constexpr double bytes_per_mebibyte = 1048576.0;

/// Power ratio from dB of loss: 10^{-dB/10}.
inline double transmissivity_from_db(double loss_db) { return std::pow(10.0, -loss_db / 10.0); }
inline double loss_db_from_transmissivity(double t) { return -10.0 * std::log10(t); }

/// Bad input from the user: names where (file, line), the key, the value and what was expected.
/// The command line maps it to exit code 2.
class InputError : public std::runtime_error {
public:
  InputError(std::string file, int line, std::string key, std::string value, std::string expected,
             std::string hint = {})
      : std::runtime_error(format(file, line, key, value, expected, hint)),
        file_(std::move(file)), line_(line), key_(std::move(key)), value_(std::move(value)),
        expected_(std::move(expected)), hint_(std::move(hint)) {}
  const std::string& file() const { return file_; }
  int line() const { return line_; }
  const std::string& key() const { return key_; }
  const std::string& value() const { return value_; }
  const std::string& expected() const { return expected_; }
  const std::string& hint() const { return hint_; }

private:
  static std::string format(const std::string& file, int line, const std::string& key,
                            const std::string& value, const std::string& expected,
                            const std::string& hint) {
    std::string s = file.empty() ? std::string("<input>") : file;
    if (line > 0) s += ":" + std::to_string(line);
    // Appended piece by piece: g++ 12 -O3 warns (-Wrestrict, falsely) on chained operator+.
    s += ": key '";
    s += key;
    s += "'";
    if (!value.empty()) {
      s += " = ";
      s += value;
    }
    s += ": expected ";
    s += expected;
    if (!hint.empty()) {
      s += " (";
      s += hint;
      s += ")";
    }
    return s;
  }
  std::string file_;
  int line_;
  std::string key_, value_, expected_, hint_;
};

/// Outcome of a numerical evaluation; carried inside results, never thrown.
/// Thrown by a computation whose cancel flag (CancelScope) was raised: it has no result.
struct Cancelled : std::runtime_error {
  Cancelled() : std::runtime_error("heraldry: computation cancelled") {}
};

namespace cancel_detail {
inline thread_local const std::atomic<bool>* cancel_flag = nullptr;
}  // namespace cancel_detail

/// For the lifetime of the scope, long kernels on this thread poll `flag` (null: never
/// cancelled) between their blocks and throw Cancelled once it is set.
class CancelScope {
public:
  explicit CancelScope(const std::atomic<bool>* flag) : previous_(cancel_detail::cancel_flag) { cancel_detail::cancel_flag = flag; }
  ~CancelScope() { cancel_detail::cancel_flag = previous_; }
  CancelScope(const CancelScope&) = delete;
  CancelScope& operator=(const CancelScope&) = delete;

private:
  const std::atomic<bool>* previous_;
};

/// Throws Cancelled when this thread's cancel flag is set (one relaxed load otherwise).
inline void poll_cancel() {
  if (cancel_detail::cancel_flag != nullptr && cancel_detail::cancel_flag->load(std::memory_order_relaxed)) throw Cancelled();
}

enum class Status {
  ok = 0,
  truncation_budget_missed = 1,  ///< the truncation loss exceeds the tolerance at the allowed cutoff
  herald_below_roundoff = 2,     ///< success probability too small to be resolved in double precision
  not_computed = 3,              ///< the point has not been evaluated (yet)
  invalid_result = 4,            ///< a guard caught a probability or measure outside its range
  separable_input = 5            ///< exact result: the state entering the heralded steps is separable, so
                                 ///< N = E_N = 0 whatever the local steps do (P and F still computed)
};

/// Whether a status carries figures one may quote: ok, or the exact separable result.
inline bool has_figures(Status s) { return s == Status::ok || s == Status::separable_input; }

/// How a point's figures were computed (the cheapest exact path for it).
enum class Method {
  none = 0,            ///< not evaluated
  covariance = 1,      ///< Gaussian steps only: covariance-matrix figures, no Fock state
  photon_number = 2,   ///< separable input: P from the joint photon-number distribution
  gaussian_sum = 3,    ///< threshold-counter heralding as a signed sum of Gaussian terms (no cutoff)
  fock = 4             ///< truncated Fock space with the truncation ledger
};

inline const char* to_string(Method m) {
  switch (m) {
    case Method::none: return "none";
    case Method::covariance: return "covariance matrix";
    case Method::photon_number: return "photon-number distribution";
    case Method::gaussian_sum: return "Gaussian sum";
    case Method::fock: return "Fock space";
  }
  return "unknown";
}

inline const char* to_string(Status s) {
  switch (s) {
    case Status::ok: return "ok";
    case Status::truncation_budget_missed: return "truncation budget missed";
    case Status::herald_below_roundoff: return "herald probability below round-off";
    case Status::not_computed: return "not computed";
    case Status::invalid_result: return "invalid result";
    case Status::separable_input: return "separable input";
  }
  return "unknown";
}

}  // namespace heraldry
