// The per-sample path of trip-point and limit-checked studies allocates nothing: global
// operator new and, on glibc, malloc itself (Eigen allocates through malloc) are replaced
// by counting versions, and an Evaluator is run a thousand times.
#include <atomic>
#include <cmath>
#include <cstddef>
#include <cstdlib>
#include <new>
#include <vector>

#include <Eigen/Dense>

#include "decision_support.hpp"
#include "study/plan.hpp"

namespace {
std::atomic<std::size_t> new_calls{0};
std::atomic<std::size_t> malloc_calls{0};
}  // namespace

// ---- operator new / delete -------------------------------------------------------
void* operator new(std::size_t size) {
  ++new_calls;
  if (void* p = std::malloc(size ? size : 1)) return p;
  throw std::bad_alloc();
}
void* operator new[](std::size_t size) { return operator new(size); }
void* operator new(std::size_t size, const std::nothrow_t&) noexcept {
  ++new_calls;
  return std::malloc(size ? size : 1);
}
void* operator new[](std::size_t size, const std::nothrow_t& tag) noexcept {
  return operator new(size, tag);
}
void operator delete(void* p) noexcept { std::free(p); }
void operator delete[](void* p) noexcept { std::free(p); }
void operator delete(void* p, std::size_t) noexcept { std::free(p); }
void operator delete[](void* p, std::size_t) noexcept { std::free(p); }
void operator delete(void* p, const std::nothrow_t&) noexcept { std::free(p); }
void operator delete[](void* p, const std::nothrow_t&) noexcept { std::free(p); }

// ---- malloc, on glibc without sanitizers (which replace malloc themselves) ---------
#if defined(__SANITIZE_ADDRESS__)
#define LOTWISE_TEST_NO_MALLOC_HOOK 1
#elif defined(__has_feature)
#if __has_feature(address_sanitizer) || __has_feature(memory_sanitizer)
#define LOTWISE_TEST_NO_MALLOC_HOOK 1
#endif
#endif
#if defined(__GLIBC__) && !defined(LOTWISE_TEST_NO_MALLOC_HOOK)
#define LOTWISE_TEST_COUNTS_MALLOC 1
extern "C" {
void* __libc_malloc(std::size_t size);
void* __libc_calloc(std::size_t count, std::size_t size);
void* __libc_realloc(void* p, std::size_t size);
void* __libc_memalign(std::size_t alignment, std::size_t size);
void __libc_free(void* p);

void* malloc(std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_malloc(size);
}
void* calloc(std::size_t count, std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_calloc(count, size);
}
void* realloc(void* p, std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_realloc(p, size);
}
void* aligned_alloc(std::size_t alignment, std::size_t size) noexcept {
  ++malloc_calls;
  return __libc_memalign(alignment, size);
}
void free(void* p) noexcept { __libc_free(p); }
}
#endif

using namespace lotwise;
using namespace lotwise::testing;
using Kind = MeasurementKind;

namespace {

struct Counts {
  std::size_t news;
  std::size_t mallocs;
};
Counts counts() { return {new_calls.load(), malloc_calls.load()}; }

// Runs `n` evaluations with parameters moved a little each time and returns the
// allocations they made; `sink` sums the values so the work is not optimised away.
Counts allocations_of_evaluations(const Study& study, int n, std::vector<double>& sink) {
  const Network& network = study.network();
  detail::Plan plan = detail::make_plan(network, study.design().measurements);
  for (std::size_t i = 0; i < plan.measurements.size(); ++i) {
    plan.measurements[i].nominal_bandwidth = study.nominal_values()[i];
  }
  detail::Evaluator evaluator(network, plan);
  const std::vector<double> nominal_theta = study.nominal_parameters();
  std::vector<double> theta = nominal_theta;
  std::vector<double> values(plan.measurements.size());
  sink.assign(plan.measurements.size(), 0.0);
  int failures = 0;

  const Counts before = counts();
  for (int k = 0; k < n; ++k) {
    for (std::size_t i = 0; i < theta.size(); ++i) {
      const int step = (k * 7 + static_cast<int>(i)) % 11 - 5;
      const double wiggle = 1.0 + 1e-3 * static_cast<double>(step);
      theta[i] = nominal_theta[i] * wiggle;
    }
    failures += evaluator.evaluate(theta.data(), values.data()) != SolveStatus::ok;
    failures += evaluator.any_saturated();
    for (std::size_t i = 0; i < values.size(); ++i) sink[i] += values[i];
  }
  const Counts after = counts();
  CHECK(failures == 0);
  return {after.news - before.news, after.mallocs - before.mallocs};
}

}  // namespace

TEST_CASE("per-sample evaluation allocates nothing: trip-point study", "[fast][allocation]") {
  // A non-inverting Schmitt trigger whose reference comes from a limited buffer (so the
  // trip states also check a linear op-amp), measured with every trip-point kind.
  OpAmpSpec buffer = limited(-12.0, 12.0, OpAmpModel::finite_gain, 1e5);
  buffer.offset = 1e-3;
  OpAmpSpec decider;
  decider.supply_high = 12.0;
  decider.supply_low = -12.0;
  decider.headroom_high = decider.headroom_low = 1.0;
  decider.offset = 2e-3;
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_voltage_source("VS", "vs", "gnd", 5.0);
  c.add_resistor("RA", "vs", "div", 10e3);
  c.add_resistor("RB", "div", "gnd", 10e3);
  c.add_opamp("U2", "div", "ref", "ref", buffer);
  c.add_resistor("R1", "in", "p", 10e3);
  c.add_resistor("R2", "out", "p", 100e3);
  c.add_opamp("U1", "p", "ref", "out", decider);
  auto ms = thresholds("VIN", "U1");
  ms.push_back(trip("high", Kind::output_high, "VIN", "U1"));
  ms.push_back(trip("low", Kind::output_low, "VIN", "U1"));
  const Study s = make_study(c, ms);
  std::vector<double> sink;
  const Counts made = allocations_of_evaluations(s, 1000, sink);
  CHECK(made.news == 0);
  CHECK(made.mallocs == 0);
  CHECK(std::isfinite(sink[0]));
}

TEST_CASE("per-sample evaluation allocates nothing: limits checked, phase, gain error",
          "[fast][allocation]") {
  OpAmpSpec amp;
  amp.model = OpAmpModel::single_pole;
  amp.supply_high = 15.0;
  amp.supply_low = -15.0;
  Circuit c;
  c.add_voltage_source("VIN", "in", "gnd", 0.5);
  c.add_opamp("U1", "in", "m", "out", amp);
  c.add_resistor("R1", "m", "gnd", 1e3);
  c.add_resistor("R2", "out", "m", 9e3);
  Measurement err = measure("err", Kind::gain_error, {"VIN"}, {"out"}, 1e3);
  err.target = 10.0;
  const Study s = make_study(c, {measure("vout", Kind::node_voltage, {}, {"out"}),
                                 measure("ph", Kind::phase, {"VIN"}, {"out"}, 20e3), err});
  std::vector<double> sink;
  const Counts made = allocations_of_evaluations(s, 1000, sink);
  CHECK(made.news == 0);
  CHECK(made.mallocs == 0);
  CHECK(std::isfinite(sink[1]));
}
