// The per-sample path allocates nothing: global operator new and, on glibc, malloc
// itself (Eigen allocates through malloc, not operator new) are replaced by counting
// versions, and an Evaluator is run a thousand times.
#include <atomic>
#include <cmath>
#include <cstddef>
#include <cstdlib>
#include <new>
#include <vector>

#include <Eigen/Dense>

#include "engine_support.hpp"
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

// Runs `n` evaluations with parameters moved a little each time (so every solve does
// real work) and returns the allocations they made.
Counts allocations_of_evaluations(const Study& study, int n, std::vector<double>& sink) {
  const Network& network = study.network();
  detail::Plan plan = detail::make_plan(network, study.design().measurements);
  // As the study does: bandwidth searches start from the nominal bandwidth.
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
      const double wiggle = 1.0 + 1e-3 * static_cast<double>((k * 7 + static_cast<int>(i)) % 11 - 5);
      theta[i] = nominal_theta[i] * wiggle;
    }
    failures += evaluator.evaluate(theta.data(), values.data()) != SolveStatus::ok;
    for (std::size_t i = 0; i < values.size(); ++i) sink[i] += values[i];
  }
  const Counts after = counts();
  CHECK(failures == 0);
  return {after.news - before.news, after.mallocs - before.mallocs};
}

}  // namespace

TEST_CASE("the allocation counters see allocations", "[fast][allocation]") {
  const Counts before = counts();
  auto* p = new std::vector<double>(100);
  delete p;
  const Counts after = counts();
  CHECK(after.news - before.news >= 2);
#ifdef LOTWISE_TEST_COUNTS_MALLOC
  CHECK(after.mallocs - before.mallocs >= 2);
  // Eigen's heap storage goes through malloc, not operator new.
  const Counts eigen_before = counts();
  {
    Eigen::MatrixXd m = Eigen::MatrixXd::Identity(40, 40);
    CHECK(m.trace() == 40.0);
  }
  const Counts eigen_after = counts();
  CHECK(eigen_after.mallocs - eigen_before.mallocs >= 1);
#endif
}

TEST_CASE("per-sample evaluation allocates nothing: DC study", "[fast][allocation]") {
  OpAmpSpec amp = finite_gain_opamp(1e5);
  amp.offset = 1e-3;
  const Study s = make_study(
      difference_amplifier(10e3, 100e3, 10e3, 100e3, amp, 2.5, 2.4),
      {measure("gain", Kind::differential_gain, {"VP", "VM"}, {"out"}),
       measure("acm", Kind::common_mode_gain, {"VP", "VM"}, {"out"}),
       measure("cmrr", Kind::cmrr, {"VP", "VM"}, {"out"}),
       measure("offset", Kind::output_offset, {"VP", "VM"}, {"out"}),
       measure("ioffset", Kind::input_offset, {"VP", "VM"}, {"out"}),
       measure("vout", Kind::node_voltage, {}, {"out"})});
  std::vector<double> sink;
  const Counts made = allocations_of_evaluations(s, 1000, sink);
  CHECK(made.news == 0);
  CHECK(made.mallocs == 0);
  CHECK(std::isfinite(sink[0]));
}

TEST_CASE("per-sample evaluation allocates nothing: AC study", "[fast][allocation]") {
  const Study s = make_study(
      non_inverting(1e3, 9e3, single_pole_opamp(1e5, 1e6)),
      {measure("g1k", Kind::gain, {"VIN"}, {"out"}, 1e3),
       measure("g50k", Kind::gain, {"VIN"}, {"out"}, 50e3),
       measure("bw", Kind::bandwidth, {"VIN"}, {"out"})});
  std::vector<double> sink;
  const Counts made = allocations_of_evaluations(s, 1000, sink);
  CHECK(made.news == 0);
  CHECK(made.mallocs == 0);
  CHECK(std::isfinite(sink[2]));
}
