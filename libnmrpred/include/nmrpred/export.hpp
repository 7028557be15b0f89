#ifndef NMRPRED_EXPORT_HPP
#define NMRPRED_EXPORT_HPP

/// \file export.hpp
/// Symbol visibility for the C++ library. Everything is built with hidden
/// visibility; only declarations marked NMRPRED_API leave the shared object.

#if defined(_WIN32)
#  if defined(NMRPRED_BUILDING)
#    define NMRPRED_API __declspec(dllexport)
#  else
#    define NMRPRED_API
#  endif
#elif defined(__GNUC__)
#  define NMRPRED_API __attribute__((visibility("default")))
#else
#  define NMRPRED_API
#endif

#endif
