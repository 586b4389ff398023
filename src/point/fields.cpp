// The fields of a point's result: the one list the HDF5 writer and reader, the MPI wire format,
// the JSON output and the verdict iterate over.
#include <array>
#include <type_traits>

#include "heraldry/point.hpp"

namespace heraldry::point {

namespace {

template <auto Member>
double get(const PointResult& r) {
  const auto v = r.*Member;
  if constexpr (std::is_enum_v<decltype(v)>)
    return static_cast<double>(static_cast<std::underlying_type_t<decltype(v)>>(v));
  else
    return static_cast<double>(v);
}

template <auto Member>
void set(PointResult& r, double v) {
  using T = std::remove_reference_t<decltype(r.*Member)>;
  if constexpr (std::is_enum_v<T>)
    r.*Member = static_cast<T>(static_cast<std::underlying_type_t<T>>(v));
  else
    r.*Member = static_cast<T>(v);
}

template <auto Member>
constexpr bool is_integer() {
  using T = std::remove_cvref_t<decltype(std::declval<PointResult>().*Member)>;
  return std::is_integral_v<T> || std::is_enum_v<T>;
}

const char* status_label(double v) { return to_string(static_cast<Status>(static_cast<int>(v))); }
const char* method_label(double v) { return to_string(static_cast<Method>(static_cast<int>(v))); }

#define HERALDRY_FIELD(member, units, description, figure) \
  Field { #member, units, description, is_integer<&PointResult::member>(), figure, &get<&PointResult::member>, &set<&PointResult::member>, nullptr }

const std::array fields{
    HERALDRY_FIELD(success_probability, "1", "probability that a trial heralds (trace of the heralded state)", true),
    HERALDRY_FIELD(negativity, "1", "negativity of the heralded state", true),
    HERALDRY_FIELD(log_negativity, "ebit", "log-negativity of the heralded state", true),
    HERALDRY_FIELD(fidelity, "1", "Braunstein-Kimble unit-gain coherent-state teleportation fidelity", true),
    HERALDRY_FIELD(heralding_rate_hz, "Hz", "heralded pairs per second: trial rate x success probability", true),
    HERALDRY_FIELD(false_herald_fraction, "1", "fraction of heralds in which a counter received fewer photons than its reading claims (none for a "
                   "click, fewer than k for k counts)",
                   true),
    HERALDRY_FIELD(truncation_error, "1",
                   "error scale of the figures: Fock space, sqrt(probability lost to the cutoff / success probability); "
                   "photon-number path, the bound on the relative error of P; 0 for closed forms",
                   false),
    HERALDRY_FIELD(amplifier_cut_fraction, "1", "input weight above the amplifier's photon-number range", false),
    HERALDRY_FIELD(cutoff, "1", "per-mode photon-number cutoff of the computation", false),
    HERALDRY_FIELD(cutoff_needed, "1", "per-mode cutoff the tolerance needs (an estimate when it was not reached)",
                   false),
    HERALDRY_FIELD(fidelity_bound, "1",
                   "1 when fidelity holds the bound 1/2 of a separable resource instead of a computed value", false),
    Field{"status", "1",
          "0 ok, 1 truncation budget missed, 2 herald below round-off, 3 not computed, 4 invalid, 5 separable input "
          "(exact: N = E_N = 0)",
          true, false, &get<&PointResult::status>, &set<&PointResult::status>, &status_label},
    Field{"method", "1",
          "0 none, 1 covariance matrix, 2 photon-number distribution, 3 Gaussian sum, 4 Fock space", true, false,
          &get<&PointResult::method>, &set<&PointResult::method>, &method_label},
};

#undef HERALDRY_FIELD

}  // namespace

std::span<const Field> result_fields() { return fields; }

const Field* find_field(std::string_view name) {
  for (const Field& f : fields)
    if (f.name == name) return &f;
  return nullptr;
}

}  // namespace heraldry::point
