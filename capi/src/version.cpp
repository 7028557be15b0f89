#include <nmrpred.h>

#include <nmrpred/error.hpp>
#include <nmrpred/version.hpp>

// The header's macros and the project version in CMake must agree, otherwise a
// host comparing NMR_VERSION_NUMBER with nmr_version_number() would be misled.
static_assert(NMR_VERSION_MAJOR == NMRPRED_PROJECT_VERSION_MAJOR, "update NMR_VERSION_MAJOR in nmrpred.h");
static_assert(NMR_VERSION_MINOR == NMRPRED_PROJECT_VERSION_MINOR, "update NMR_VERSION_MINOR in nmrpred.h");
static_assert(NMR_VERSION_PATCH == NMRPRED_PROJECT_VERSION_PATCH, "update NMR_VERSION_PATCH in nmrpred.h");

// The C enum and the C++ Status must keep the same numbers.
static_assert(NMR_ERR_ARGUMENT == static_cast<int>(nmrpred::Status::Argument));
static_assert(NMR_ERR_INPUT == static_cast<int>(nmrpred::Status::Input));
static_assert(NMR_ERR_UNSUPPORTED == static_cast<int>(nmrpred::Status::Unsupported));
static_assert(NMR_ERR_TABLES == static_cast<int>(nmrpred::Status::Tables));
static_assert(NMR_ERR_NOMEM == static_cast<int>(nmrpred::Status::NoMemory));
static_assert(NMR_ERR_INTERNAL == static_cast<int>(nmrpred::Status::Internal));

extern "C" {

int nmr_version_number(void) { return nmrpred::version_number(); }

const char *nmr_version_string(void) { return nmrpred::version_string(); }

const char *nmr_status_string(int status) {
  if (status < NMR_OK || status > NMR_ERR_INTERNAL) return "unknown status";
  return nmrpred::status_name(static_cast<nmrpred::Status>(status));
}

}  // extern "C"
