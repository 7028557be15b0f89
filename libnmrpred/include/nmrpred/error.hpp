#ifndef NMRPRED_ERROR_HPP
#define NMRPRED_ERROR_HPP

/// \file error.hpp
/// Exceptions thrown by the C++ API. Each carries the status code that the C ABI
/// reports for the same failure (see capi/include/nmrpred.h), so every layer
/// agrees on what went wrong.

#include <stdexcept>
#include <string>

#include <nmrpred/export.hpp>

namespace nmrpred {

/// Status codes shared with the C ABI. Append only; never renumber.
enum class Status : int {
  Ok = 0,
  Argument = 1,     ///< a caller-supplied argument is invalid (null, out of range, unknown name)
  Input = 2,        ///< the structure or data text cannot be used (syntax, unknown element, ...)
  Unsupported = 3,  ///< a valid request the library does not handle (unknown option key, format)
  Tables = 4,       ///< a data table is missing, malformed or names an unknown source
  NoMemory = 5,     ///< allocation failed
  Internal = 6,     ///< a bug in the library: please report it
};

/// Short, static English name of a status ("ok", "invalid argument", ...).
NMRPRED_API const char *status_name(Status status) noexcept;

/// Base of every exception the library throws. Thread rule: plain value, copyable.
class NMRPRED_API Error : public std::runtime_error {
 public:
  Error(Status status, const std::string &message) : std::runtime_error(message), status_(status) {}
  /// The C ABI status that corresponds to this failure.
  Status status() const noexcept { return status_; }

 private:
  Status status_;
};

/// A caller-supplied argument is invalid. C status NMR_ERR_ARGUMENT.
class NMRPRED_API ArgumentError : public Error {
 public:
  explicit ArgumentError(const std::string &m) : Error(Status::Argument, m) {}
};

/// Input text or data cannot be used. C status NMR_ERR_INPUT.
class NMRPRED_API InputError : public Error {
 public:
  explicit InputError(const std::string &m) : Error(Status::Input, m) {}
};

/// A valid request that the library does not handle. C status NMR_ERR_UNSUPPORTED.
class NMRPRED_API UnsupportedError : public Error {
 public:
  explicit UnsupportedError(const std::string &m) : Error(Status::Unsupported, m) {}
};

/// A table is missing, malformed or cites an unknown source. C status NMR_ERR_TABLES.
class NMRPRED_API TablesError : public Error {
 public:
  explicit TablesError(const std::string &m) : Error(Status::Tables, m) {}
};

/// An internal invariant failed. C status NMR_ERR_INTERNAL.
class NMRPRED_API InternalError : public Error {
 public:
  explicit InternalError(const std::string &m) : Error(Status::Internal, m) {}
};

}  // namespace nmrpred

#endif
