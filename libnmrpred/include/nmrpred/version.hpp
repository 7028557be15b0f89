#ifndef NMRPRED_VERSION_HPP
#define NMRPRED_VERSION_HPP

/// \file version.hpp
/// Version of the library as built. The C ABI reports the same numbers through
/// nmr_version_string() and nmr_version_number().
///
/// Thread rule: pure functions returning static data; call from any thread.

#include <nmrpred/export.hpp>

namespace nmrpred {

/// Version of the built library as "MAJOR.MINOR.PATCH" (for example "0.1.0").
/// Static text owned by the library; never null.
NMRPRED_API const char *version_string() noexcept;

/// Version of the built library as MAJOR * 10000 + MINOR * 100 + PATCH, the same
/// encoding as NMR_VERSION_NUMBER in the C header.
NMRPRED_API int version_number() noexcept;

}  // namespace nmrpred

#endif
