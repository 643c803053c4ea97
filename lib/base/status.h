// Status and Result<T>: how expected failures travel inside lib/.
//
// Every function at a module boundary that can fail for a reason outside the
// programmer's control (bad input, a missing file, a full disk) returns a Status or a
// Result<T>. Exceptions thrown by third-party libraries (yaml-cpp, Asio, the standard
// library) are caught at the call site and turned into a Status whose message names
// the file, line and key involved.
//
// Messages say what was wrong, where, and what would be accepted, e.g.
//   config.yaml:14: model.k must be an integer from 2 to 256, got "six"
//
// Thread safety: values; copy freely between threads.
#pragma once

#include <cassert>
#include <string>
#include <string_view>
#include <utility>
#include <variant>

namespace seston {

enum class StatusCode {
  kOk = 0,
  kInvalidArgument,    // the caller's input is wrong (config, record, request)
  kNotFound,           // a named thing does not exist
  kAlreadyExists,      // a thing that must be new is not
  kFailedPrecondition, // the system is not in a state to do this (e.g. still warming up)
  kOutOfRange,         // a value or index outside what is accepted
  kResourceExhausted,  // a bound is reached (queue full, disk full)
  kUnavailable,        // try again later
  kCorruption,         // stored data fails its checksum or format
  kIoError,            // the operating system refused an operation
  kInternal,           // a bug: an invariant did not hold
};

// Stable lower-case name of a code, used in logs and JSON ("invalid_argument").
std::string_view StatusCodeName(StatusCode code);

class [[nodiscard]] Status {
 public:
  Status() = default;  // ok
  Status(StatusCode code, std::string message) : code_(code), message_(std::move(message)) {}

  static Status Ok() { return {}; }
  static Status InvalidArgument(std::string m) { return {StatusCode::kInvalidArgument, std::move(m)}; }
  static Status NotFound(std::string m) { return {StatusCode::kNotFound, std::move(m)}; }
  static Status AlreadyExists(std::string m) { return {StatusCode::kAlreadyExists, std::move(m)}; }
  static Status FailedPrecondition(std::string m) {
    return {StatusCode::kFailedPrecondition, std::move(m)};
  }
  static Status OutOfRange(std::string m) { return {StatusCode::kOutOfRange, std::move(m)}; }
  static Status ResourceExhausted(std::string m) {
    return {StatusCode::kResourceExhausted, std::move(m)};
  }
  static Status Unavailable(std::string m) { return {StatusCode::kUnavailable, std::move(m)}; }
  static Status Corruption(std::string m) { return {StatusCode::kCorruption, std::move(m)}; }
  static Status IoError(std::string m) { return {StatusCode::kIoError, std::move(m)}; }
  static Status Internal(std::string m) { return {StatusCode::kInternal, std::move(m)}; }

  bool ok() const { return code_ == StatusCode::kOk; }
  StatusCode code() const { return code_; }
  const std::string& message() const { return message_; }

  // "ok", or "<code name>: <message>".
  std::string ToString() const;

  // The same status with "<context>: " put before the message (ok stays ok).
  Status WithContext(std::string_view context) const;

 private:
  StatusCode code_ = StatusCode::kOk;
  std::string message_;
};

// A value or the Status explaining why there is none.
template <typename T>
class [[nodiscard]] Result {
 public:
  Result(T value) : data_(std::in_place_index<0>, std::move(value)) {}  // NOLINT: implicit
  Result(Status status) : data_(std::in_place_index<1>, std::move(status)) {  // NOLINT
    assert(!std::get<1>(data_).ok() && "Result built from an ok Status has no value");
  }

  bool ok() const { return data_.index() == 0; }
  // Ok when a value is held.
  Status status() const { return ok() ? Status::Ok() : std::get<1>(data_); }

  T& value() & { return std::get<0>(data_); }
  const T& value() const& { return std::get<0>(data_); }
  T&& value() && { return std::get<0>(std::move(data_)); }
  T& operator*() & { return value(); }
  const T& operator*() const& { return value(); }
  T* operator->() { return &value(); }
  const T* operator->() const { return &value(); }

 private:
  std::variant<T, Status> data_;
};

}  // namespace seston

#define SESTON_STATUS_CONCAT_INNER(a, b) a##b
#define SESTON_STATUS_CONCAT(a, b) SESTON_STATUS_CONCAT_INNER(a, b)

// Returns the Status from the enclosing function when `expr` is not ok.
#define SESTON_RETURN_IF_ERROR(expr)                 \
  do {                                               \
    ::seston::Status seston_status_ = (expr);        \
    if (!seston_status_.ok()) return seston_status_; \
  } while (false)

// `SESTON_ASSIGN_OR_RETURN(auto x, MakeX());` declares x from a Result or returns its Status.
#define SESTON_ASSIGN_OR_RETURN(lhs, expr) \
  SESTON_ASSIGN_OR_RETURN_IMPL(SESTON_STATUS_CONCAT(seston_result_, __LINE__), lhs, expr)
#define SESTON_ASSIGN_OR_RETURN_IMPL(tmp, lhs, expr) \
  auto tmp = (expr);                                 \
  if (!tmp.ok()) return tmp.status();                \
  lhs = std::move(tmp).value()
