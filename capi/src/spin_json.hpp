// Private: the spin-system JSON read by nmr_simulate_json() and by the Python
// module's simulate() (which compiles spin_json.cpp too), so both accept the
// same text as the `nmrpred simulate` program; and the default axis of a
// simulated spectrum, shared for the same reason.
#ifndef NMRPRED_CAPI_SPIN_JSON_HPP
#define NMRPRED_CAPI_SPIN_JSON_HPP

#include <string_view>

#include <nmrpred/spectrum.hpp>
#include <nmrpred/spin.hpp>

namespace nmrpred::capi {

/// A spin system with the isotope to observe and the simulation settings.
struct SpinInput {
  SpinSystem system;
  SpinNucleus observe = SpinNucleus::H1;
  SimulationOptions options;
};

/// Reads {"mhz", "spins", "couplings", "observe", "line_width_hz",
/// "weak_coupling_ratio", "max_block_size", "merge_tolerance_hz",
/// "equivalent_shift_tolerance_ppm"} (see nmr_simulate_json() in nmrpred.h).
/// Keys left out keep the values of `defaults`; "mhz" is optional for that
/// reason. Throws ArgumentError naming the key, spin or coupling at fault
/// (text that is not JSON, unknown keys, wrong types, negative indices);
/// the system itself is checked later by simulate(). Thread rule: pure.
SpinInput parse_spin_system_json(std::string_view text, const SimulationOptions &defaults);

/// Fewest points, a power of two from 65536 up to 4194304, giving at least 4
/// samples per line width over the axis: the rule of sampling_defaults(),
/// applied to any axis.
std::size_t default_points(double ppm_low, double ppm_high, double observe_mhz, double width_hz);

/// Sampling settings for `sim`: for 1H and 13C sampling_defaults() at the
/// observed frequency (then `file_nucleus` is true: the spectrum can be
/// written as JCAMP-DX and SVG); for other isotopes the lines' span widened by
/// 10 % and at least 1 ppm each side. Width `line_width_hz`; broad signals at
/// least as wide. Points follow default_points(). Throws ArgumentError for a
/// width that is not finite and > 0.
SamplingOptions default_sampling(const Simulation &sim, double line_width_hz, bool &file_nucleus);

}  // namespace nmrpred::capi

#endif
