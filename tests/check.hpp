#ifndef NMRPRED_TESTS_CHECK_HPP
#define NMRPRED_TESTS_CHECK_HPP
// Shared test helpers. Tolerances are absolute (ppm or Hz): doctest::Approx is
// relative and misleads near 0 ppm.
#include <cmath>
#include <cstdint>
#include <filesystem>
#include <string>
#include <system_error>
#include <doctest/doctest.h>

inline void check_close(double got, double want, double tol) {
  INFO("got " << got << ", want " << want << " +/- " << tol);
  CHECK(std::fabs(got - want) <= tol);
}
// A fresh temporary folder for one test, removed afterwards.
struct TempDir {
  std::filesystem::path path;
  explicit TempDir(const std::string &tag) {
    path = std::filesystem::temp_directory_path() /
           ("nmrpred-test-" + tag + "-" + std::to_string(reinterpret_cast<std::uintptr_t>(this)));
    std::filesystem::remove_all(path);
    std::filesystem::create_directories(path);
  }
  ~TempDir() {
    std::error_code ec;
    std::filesystem::remove_all(path, ec);
  }
};
#endif
