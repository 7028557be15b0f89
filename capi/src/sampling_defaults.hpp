// Private: the default axis of a simulated spectrum, shared by the C ABI and
// the Python module (which compiles sampling_defaults.cpp too) so both draw the same.
// The spin-system JSON itself is read by the library
// (nmrpred::parse_spin_system_json() in nmrpred/spin.hpp).
#ifndef NMRPRED_CAPI_SAMPLING_DEFAULTS_HPP
#define NMRPRED_CAPI_SAMPLING_DEFAULTS_HPP

#include <cstddef>

#include <nmrpred/spectrum.hpp>
#include <nmrpred/spin.hpp>

namespace nmrpred::capi {

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
