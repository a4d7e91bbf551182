// A value or a message saying what was wrong and what was expected. Used on
// paths where bad input is normal (files, configs, requests), so callers must
// look at the outcome instead of catching exceptions.
#pragma once

#include <string>
#include <utility>
#include <variant>

namespace tensile {

struct Error {
    std::string message;
};

template <class T>
class Result {
public:
    Result(T value) : state_(std::move(value)) {}         // NOLINT: implicit by design
    Result(Error error) : state_(std::move(error)) {}     // NOLINT: implicit by design

    [[nodiscard]] bool ok() const { return std::holds_alternative<T>(state_); }
    explicit operator bool() const { return ok(); }
    T& value() { return std::get<T>(state_); }
    const T& value() const { return std::get<T>(state_); }
    T& operator*() { return value(); }
    const T& operator*() const { return value(); }
    T* operator->() { return &value(); }
    const T* operator->() const { return &value(); }
    [[nodiscard]] const std::string& error() const { return std::get<Error>(state_).message; }

private:
    std::variant<T, Error> state_;
};

}  // namespace tensile
