#ifndef NMRPRED_SIMULATION_SPECTRUM_SHAPES_HPP
#define NMRPRED_SIMULATION_SPECTRUM_SHAPES_HPP

// Line shapes and the sampling kernel shared by spectrum_*.cpp (sampling,
// solvent peaks, JCAMP-DX and SVG output). Private to src/simulation/.

#include <cstddef>
#include <vector>

#include <nmrpred/spectrum.hpp>

namespace nmrpred::detail {

// A line ready to sample: centre, area and FWHM, all in ppm.
struct ShapedLine {
  double ppm = 0;
  double area = 0;
  double fwhm_ppm = 0;
};

// Height at `offset_ppm` from the centre of a line of unit area.
double line_shape_value(LineShape shape, double offset_ppm, double fwhm_ppm);
// Area of a unit line from -infinity up to `offset_ppm` from its centre (0..1).
double line_shape_cdf(LineShape shape, double offset_ppm, double fwhm_ppm);

// Adds every line to out[0..n), where sample i sits at low_ppm + i * step_ppm.
// Allocates O(n / 64) scratch once per call, never per point.
void accumulate_lines(const std::vector<ShapedLine> &lines, LineShape shape, double low_ppm, double step_ppm,
                      std::size_t n, double *out);

// Throws ArgumentError (prefixed by `who`) unless the spectrum has >= 2
// points, equal-length arrays, finite values and a finite, positive field.
void check_sampled(const SampledSpectrum &spectrum, const char *who);

}  // namespace nmrpred::detail

#endif
