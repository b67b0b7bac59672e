// The per-sample path allocates nothing: global operator new and, on glibc, malloc
// itself (Eigen allocates through malloc, not operator new) are replaced by counting
// versions, and an Evaluator is run a thousand times.
#include <cmath>
#include <cstddef>
#include <vector>

#include <Eigen/Dense>

#include "engine_support.hpp"
#include "evaluation_allocations.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Kind = MeasurementKind;

TEST_CASE("the allocation counters see allocations", "[fast][allocation]") {
  const AllocationCounts before = allocation_counts();
  // A direct call, not a new-expression: the compiler may not leave it out.
  void* p = ::operator new(800);
  ::operator delete(p);
  const AllocationCounts after = allocation_counts();
  CHECK(after.news - before.news == 1);
  if (malloc_counted()) {
    CHECK(after.mallocs - before.mallocs == 1);
    // Eigen's heap storage goes through malloc, not operator new.
    const AllocationCounts eigen_before = allocation_counts();
    {
      Eigen::MatrixXd m = Eigen::MatrixXd::Identity(40, 40);
      CHECK(m.trace() == 40.0);
    }
    const AllocationCounts eigen_after = allocation_counts();
    CHECK(eigen_after.mallocs - eigen_before.mallocs >= 1);
  }
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
  const AllocationCounts made = allocations_of_evaluations(s, 1000, sink);
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
  const AllocationCounts made = allocations_of_evaluations(s, 1000, sink);
  CHECK(made.news == 0);
  CHECK(made.mallocs == 0);
  CHECK(std::isfinite(sink[2]));
}
