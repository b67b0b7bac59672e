#pragma once
// The lotwise error hierarchy. Misuse and bad input throw one of these; per-sample
// numerical outcomes (an unsolvable draw) are counted in the result instead.
#include <stdexcept>
#include <string>

namespace lotwise {

/// Base of every error lotwise throws on purpose.
class Error : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// A design (file or built in code) is malformed: unknown key, bad number, missing name.
class DesignError : public Error {
 public:
  using Error::Error;
};

/// The circuit cannot be solved as drawn: floating node, loop of voltage sources,
/// singular network at nominal values.
class CircuitError : public Error {
 public:
  using Error::Error;
};

/// A run was asked for something it cannot do (zero samples, bad option).
class RunError : public Error {
 public:
  using Error::Error;
};

}  // namespace lotwise
