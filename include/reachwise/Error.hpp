#pragma once
/// \file
/// Typed errors. Library code throws these; only the command-line program
/// turns them into messages and exit codes.

#include <cstdint>
#include <optional>
#include <stdexcept>
#include <string>

namespace reachwise {

/// Root of every error reachwise throws on purpose.
class Error : public std::runtime_error {
public:
  using std::runtime_error::runtime_error;
};

/// A physical or numerical parameter is out of its valid range (slope <= 0,
/// a NaN width, a discharge beyond a full pipe, ...). `quantity()` names it.
class InvalidParameter : public Error {
public:
  InvalidParameter(std::string quantity, const std::string& message)
      : Error(quantity + ": " + message), quantity_(std::move(quantity)) {}
  const std::string& quantity() const noexcept { return quantity_; }

private:
  std::string quantity_;
};

/// Where in the user's input something went wrong. Every member is optional;
/// `describe()` joins those that are set.
struct InputLocation {
  std::string file;
  std::string layer;
  std::optional<std::int64_t> fid;     ///< OGR feature id
  std::string reach_id;
  std::string lake_id;
  std::string gauge_id;
  std::string field;
  std::optional<std::int64_t> line;    ///< 1-based line in a text file
  std::string time;                    ///< ISO 8601 time stamp

  std::string describe() const;
};

/// Bad user input (a file that cannot be read, a field that is missing,
/// an unparsable time). Carries the location for the message.
class InputError : public Error {
public:
  InputError(InputLocation where, const std::string& message)
      : Error(compose(where, message)), where_(std::move(where)), message_(message) {}
  const InputLocation& where() const noexcept { return where_; }
  /// The message without the location prefix.
  const std::string& plainMessage() const noexcept { return message_; }

private:
  static std::string compose(const InputLocation& where, const std::string& message);
  InputLocation where_;
  std::string message_;
};

/// An internal invariant failed: a bug, not bad input.
class InternalError : public Error {
public:
  using Error::Error;
};

/// Throws InternalError with the expression and source location.
#define REACHWISE_ASSERT(expr)                                                           \
  do {                                                                                   \
    if (!(expr))                                                                         \
      throw ::reachwise::InternalError(std::string("internal check failed: ") + #expr + \
                                       " at " + __FILE__ + ":" + std::to_string(__LINE__)); \
  } while (false)

}  // namespace reachwise
