// The per-sample path of the variation model allocates nothing: global operator new and,
// on glibc, malloc itself are replaced by counting versions, and every sampler fills and
// maps points of a model with every kind of structure.
#include <cmath>
#include <cstddef>
#include <vector>

#include "allocation_counter.hpp"
#include "variation_support.hpp"


using namespace lotwise;
using namespace lotwise::testing;

TEST_CASE("the variation allocation counters see allocations", "[fast][allocation]") {
  const AllocationCounts before = allocation_counts();
  // A direct call, not a new-expression: the compiler may not leave it out.
  void* p = ::operator new(800);
  ::operator delete(p);
  CHECK((allocation_counts() - before).news == 1);
  if (malloc_counted()) CHECK((allocation_counts() - before).mallocs == 1);
}

TEST_CASE("drawing and mapping points allocates nothing", "[fast][allocation]") {
  // Every law, a lot, a matched network with coefficients, a correlation and a drawn
  // temperature.
  const Circuit c = resistor_probes({"R1", "R2", "R3", "R4", "R5", "R6", "R7", "R8"}, 1e3);
  std::vector<Variation> vs;
  Variation network({"R1", "R2"}, Distribution::normal, 0.001);
  network.ratio_tolerance = 1e-4;
  network.tempco_tolerance = 25e-6;
  network.tempco_tracking = 2e-6;
  vs.push_back(network);
  Variation lot({"R3"}, Distribution::uniform, 0.01);
  lot.lot_tolerance = 0.01;
  lot.tempco = 100e-6;
  lot.tempco_tolerance = 50e-6;
  vs.push_back(lot);
  vs.push_back(Variation({"R4"}, Distribution::truncated_normal, 0.01, true, 2.0));
  vs.push_back(Variation({"R5"}, Distribution::triangular, 0.01));
  vs.push_back(Variation({"R6"}, Distribution::log_normal, 0.2));
  Variation binned({"R7"}, Distribution::binned, 0.05);
  binned.inner_tolerance = 0.01;
  vs.push_back(binned);
  vs.push_back(Variation({"R8"}, Distribution::fixed));
  Temperature t;
  t.drawn = true;
  t.low = -40.0;
  t.high = 85.0;
  const std::vector<Correlation> rho = {{{"R3", "R4", "R6"}, 0.5}};
  const detail::VariationModel model(c, vs, rho, t);
  const detail::SobolDirections directions(model.dimension());
  std::vector<double> theta(c.parameters().size(), 1.0);
  for (Sampler sampler : {Sampler::monte_carlo, Sampler::sobol, Sampler::latin_hypercube}) {
    CAPTURE(to_string(sampler));
    detail::PointStream stream(model, sampler, 512, &directions);
    detail::BuildScratch scratch = model.make_scratch();
    double sink = 0.0;
    const AllocationCounts before = allocation_counts();
    for (std::uint64_t chunk = 0; chunk < 4; ++chunk) {
      stream.start(9, chunk, chunk / 2, (chunk % 2) * 512, 512);
      for (int i = 0; i < 512; ++i) {
        model.prepare(stream.next(), scratch);
        model.apply(scratch, model.temperature_of(scratch, 0), theta.data());
        for (double v : theta) sink += v;
      }
    }
    CHECK((allocation_counts() - before).news == 0);
    CHECK((allocation_counts() - before).mallocs == 0);
    CHECK(std::isfinite(sink));
  }
}
