// Status and Result: how every Lodestone call reports failure.
//
// Lodestone never throws across its API and never aborts the MPI job for a
// user's mistake. A call returns a Status (or a Result<T>, which holds either a
// value or a Status). A Status carries a kind, which maps to the documented exit
// status of the `lodestone` command, and one line of text meant for a person.
// Calls that are collective return the same Status on every rank: failure is
// agreed across ranks before anyone moves on to the next collective operation.
#pragma once

#include <string>
#include <utility>
#include <variant>

namespace lodestone {

// What went wrong, in the terms of the command's exit status.
enum class ErrorKind {
  none = 0,         // success                          -> exit 0
  input = 1,        // bad file, bad matrix, I/O or runtime failure -> exit 1
  usage = 2,        // bad option or argument            -> exit 2
  stopped = 3,      // stopped early, resumable         -> exit 3
  budget = 4,       // matvec budget exhausted          -> exit 4
};

class Status {
 public:
  Status() = default;
  static Status ok() { return Status(); }
  static Status input(std::string message) { return Status(ErrorKind::input, std::move(message)); }
  static Status usage(std::string message) { return Status(ErrorKind::usage, std::move(message)); }
  static Status stopped(std::string message) { return Status(ErrorKind::stopped, std::move(message)); }
  static Status budget(std::string message) { return Status(ErrorKind::budget, std::move(message)); }

  Status(ErrorKind kind, std::string message) : kind_(kind), message_(std::move(message)) {}

  bool is_ok() const { return kind_ == ErrorKind::none; }
  explicit operator bool() const { return is_ok(); }
  ErrorKind kind() const { return kind_; }
  const std::string& message() const { return message_; }
  int exit_code() const { return static_cast<int>(kind_); }

 private:
  ErrorKind kind_ = ErrorKind::none;
  std::string message_;
};

// A value or the Status that explains why there is none.
template <class T>
class Result {
 public:
  Result(T value) : data_(std::move(value)) {}            // NOLINT: implicit by design
  Result(Status status) : data_(std::move(status)) {}     // NOLINT: implicit by design

  bool is_ok() const { return std::holds_alternative<T>(data_); }
  explicit operator bool() const { return is_ok(); }
  T& value() & { return std::get<T>(data_); }
  const T& value() const& { return std::get<T>(data_); }
  T&& value() && { return std::get<T>(std::move(data_)); }
  T& operator*() & { return value(); }
  T* operator->() { return &value(); }
  const T* operator->() const { return &value(); }
  Status status() const { return is_ok() ? Status::ok() : std::get<Status>(data_); }

 private:
  std::variant<T, Status> data_;
};

}  // namespace lodestone

// Return early from the enclosing function when a Status-returning call fails.
#define LODESTONE_TRY(expr)                          \
  do {                                               \
    ::lodestone::Status lodestone_try_s_ = (expr);   \
    if (!lodestone_try_s_.is_ok()) return lodestone_try_s_; \
  } while (0)
