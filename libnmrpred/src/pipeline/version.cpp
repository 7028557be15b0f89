#include <nmrpred/version.hpp>

#include <charconv>
#include <cstring>

#ifndef NMRPRED_VERSION_STRING
#error "NMRPRED_VERSION_STRING must be defined by the build (libnmrpred/CMakeLists.txt)"
#endif

namespace nmrpred {

const char *version_string() noexcept { return NMRPRED_VERSION_STRING; }

int version_number() noexcept {
  // The string is the single source of truth (CMake's project version), so the
  // number is derived from it rather than kept in a second place.
  const char *p = NMRPRED_VERSION_STRING;
  const char *end = p + std::strlen(p);
  int parts[3] = {0, 0, 0};
  for (int k = 0; k < 3 && p < end; ++k) {
    auto r = std::from_chars(p, end, parts[k]);
    p = r.ptr;
    if (p < end && *p == '.') ++p;
  }
  return parts[0] * 10000 + parts[1] * 100 + parts[2];
}

}  // namespace nmrpred
