#ifndef NMRPRED_TESTS_CHECK_HPP
#define NMRPRED_TESTS_CHECK_HPP
// Shared test helpers. Tolerances are absolute (ppm or Hz): doctest::Approx is
// relative and misleads near 0 ppm.
#include <cmath>
#include <doctest/doctest.h>

inline void check_close(double got, double want, double tol) {
  INFO("got " << got << ", want " << want << " +/- " << tol);
  CHECK(std::fabs(got - want) <= tol);
}
#endif
