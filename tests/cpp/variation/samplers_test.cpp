// The samplers: Sobol points against published ones, scrambling that keeps the net
// structure, Latin hypercube strata, determinism on any thread count, replicate errors,
// and the gain of randomised QMC over plain Monte Carlo on a smooth measurement.
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <vector>

#include <boost/random/sobol.hpp>

#include "variation_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Kind = MeasurementKind;

namespace {

std::uint64_t bits(double x) {
  std::uint64_t b;
  std::memcpy(&b, &x, sizeof b);
  return b;
}

// A 64-bit fraction from a value of the form k / 2^m.
std::uint64_t fraction(double x) { return static_cast<std::uint64_t>(std::ldexp(x, 64)); }

// A model of `d` independent uniform coordinates (uniform spreads on resistors).
struct UniformModel {
  Circuit circuit;
  std::vector<Variation> variations;
  explicit UniformModel(std::size_t d) {
    std::vector<std::string> names;
    for (std::size_t j = 0; j < d; ++j) names.push_back("R" + std::to_string(j + 1));
    circuit = resistor_probes(names, 1e3);
    variations = {Variation({"R*"}, Distribution::uniform, 0.01)};
  }
};

// Points of a stream: `count` points from `begin` of replicate `replicate`.
std::vector<std::vector<double>> points_of(const detail::VariationModel& model, Sampler sampler,
                                           std::uint64_t seed, std::uint64_t replicate,
                                           std::uint64_t begin, std::size_t count,
                                           std::uint64_t chunk = 0) {
  const detail::SobolDirections directions(model.dimension());
  detail::PointStream stream(model, sampler, static_cast<std::uint32_t>(std::max<std::size_t>(count, 1)),
                             &directions);
  stream.start(seed, chunk, replicate, begin, count);
  std::vector<std::vector<double>> out;
  for (std::size_t i = 0; i < count; ++i) {
    const double* p = stream.next();
    out.emplace_back(p, p + model.dimension());
  }
  return out;
}

// A non-inverting amplifier (gain 1 + R2/R1 = 11) on a finite-gain op-amp, with 1 %
// resistors and A0 spread +-30 %: its gain is a smooth function of four coordinates.
Study amplifier() {
  Design d;
  d.circuit = non_inverting(1e3, 10e3, finite_gain_opamp(2e4), 0.0, 100.0);
  d.variations = {Variation({"R*"}, Distribution::normal, 0.01),
                  Variation({"U1.open_loop_gain"}, Distribution::uniform, 0.3)};
  d.measurements = {measure("gain", Kind::gain, {"VIN"}, {"out"})};
  d.specs = {Spec{"gain", 10.9, 11.0}};
  return Study(std::move(d));
}

YieldResult run(const Study& s, Sampler sampler, std::uint64_t n, std::uint32_t replicates,
                unsigned threads, std::uint32_t chunk = 256, std::uint64_t seed = 42) {
  RunOptions o;
  o.samples = n;
  o.seed = seed;
  o.threads = threads;
  o.chunk_size = chunk;
  o.sampler = sampler;
  o.replicates = replicates;
  o.keep_samples = true;
  return s.run(o);
}

}  // namespace

TEST_CASE("unscrambled Sobol points equal the published ones", "[fast][sobol]") {
  // source: scipy.stats.qmc.Sobol(d=2, scramble=False).random(16), first 8 points
  // (references.md, [computed])
  const double expected2[8][2] = {{0, 0},         {.5, .5},       {.75, .25},     {.25, .75},
                                  {.375, .375},   {.875, .875},   {.625, .125},   {.125, .625}};
  const detail::SobolDirections two(2);
  for (std::uint64_t i = 0; i < 8; ++i) {
    std::uint64_t x[2];
    detail::sobol_point(two, i, x);
    CAPTURE(i);
    CHECK(x[0] == fraction(expected2[i][0]));
    CHECK(x[1] == fraction(expected2[i][1]));
  }
  // source: scipy.stats.qmc.Sobol(d=6, scramble=False).random(8), scipy 1.17 [computed]
  const double expected6[8][6] = {{0, 0, 0, 0, 0, 0},
                                  {.5, .5, .5, .5, .5, .5},
                                  {.75, .25, .25, .25, .75, .75},
                                  {.25, .75, .75, .75, .25, .25},
                                  {.375, .375, .625, .875, .375, .125},
                                  {.875, .875, .125, .375, .875, .625},
                                  {.625, .125, .875, .625, .625, .875},
                                  {.125, .625, .375, .125, .125, .375}};
  const detail::SobolDirections six(6);
  for (std::uint64_t i = 0; i < 8; ++i) {
    std::uint64_t x[6];
    detail::sobol_point(six, i, x);
    for (int j = 0; j < 6; ++j) {
      CAPTURE(i, j);
      CHECK(x[j] == fraction(expected6[i][j]));
    }
  }
}

TEST_CASE("Sobol points equal Boost.Random's engine, which skips the origin", "[fast][sobol]") {
  const std::size_t d = 12;
  const detail::SobolDirections directions(d);
  boost::random::sobol engine(d);
  std::vector<std::uint64_t> x(d);
  for (std::uint64_t i = 1; i <= 5000; ++i) {
    detail::sobol_point(directions, i, x.data());
    for (std::size_t j = 0; j < d; ++j) {
      if (x[j] != engine()) FAIL("point " << i << " dimension " << j);
    }
  }
  // The stream of the sampler continues the same sequence from any start (unscrambled
  // points read through the stream's own generator would need the scramble off; here the
  // closed form of point i agrees with stepping).
  std::vector<std::uint64_t> y(d);
  detail::sobol_point(directions, 4096 + 17, y.data());
  engine.seed(4096 + 16);
  for (std::size_t j = 0; j < d; ++j) CHECK(y[j] == engine());
}

TEST_CASE("scrambled Sobol points keep their net structure", "[fast][sobol]") {
  // A linear matrix scramble with digital shift maps a (t, m, s)-net to one with the same
  // t: in every coordinate each of the 2^m strata holds one of 2^m consecutive aligned
  // points, and the first two coordinates form a (0, m, 2)-net.
  // source: J. Matousek, J. Complexity 14, 1998; I. M. Sobol' 1967 (from memory)
  const UniformModel u(5);
  const detail::VariationModel model(u.circuit, u.variations, {}, {});
  const int m = 10;
  const std::size_t n = std::size_t{1} << m;
  for (std::uint64_t begin : {std::uint64_t{0}, std::uint64_t{n}}) {
    const auto pts = points_of(model, Sampler::sobol, 7, 3, begin, n);
    for (std::size_t j = 0; j < 5; ++j) {
      std::vector<int> strata(n, 0);
      for (const auto& p : pts) ++strata[static_cast<std::size_t>(p[j] * n)];
      CAPTURE(begin, j);
      CHECK(std::all_of(strata.begin(), strata.end(), [](int c) { return c == 1; }));
    }
    for (int a = 0; a <= m; ++a) {
      const std::size_t rows = std::size_t{1} << a, cols = n / rows;
      std::vector<int> boxes(n, 0);
      for (const auto& p : pts) {
        ++boxes[static_cast<std::size_t>(p[0] * rows) * cols + static_cast<std::size_t>(p[1] * cols)];
      }
      CAPTURE(begin, a);
      CHECK(std::all_of(boxes.begin(), boxes.end(), [](int c) { return c == 1; }));
    }
  }
  // Not the unscrambled points, and another replicate is another scramble.
  const auto r3 = points_of(model, Sampler::sobol, 7, 3, 0, 4);
  const auto r4 = points_of(model, Sampler::sobol, 7, 4, 0, 4);
  CHECK(r3[0][0] != 0.5 / static_cast<double>(std::uint64_t{1} << 53));
  CHECK(r3[1] != r4[1]);
}

TEST_CASE("a chunk's points depend only on its place in the sequence", "[fast][sobol]") {
  const UniformModel u(7);
  const detail::VariationModel model(u.circuit, u.variations, {}, {});
  const auto whole = points_of(model, Sampler::sobol, 11, 2, 0, 1000);
  const auto tail = points_of(model, Sampler::sobol, 11, 2, 300, 700, 99);
  for (std::size_t i = 0; i < 700; ++i) {
    for (std::size_t j = 0; j < 7; ++j) {
      if (bits(whole[300 + i][j]) != bits(tail[i][j])) FAIL("point " << 300 + i);
    }
  }
  // Monte Carlo and Latin hypercube chunks are keyed by the chunk index instead.
  const auto a = points_of(model, Sampler::monte_carlo, 11, 0, 0, 10, 5);
  const auto b = points_of(model, Sampler::monte_carlo, 11, 0, 0, 10, 5);
  const auto c = points_of(model, Sampler::monte_carlo, 11, 0, 0, 10, 6);
  CHECK(a == b);
  CHECK(a != c);
}

TEST_CASE("Latin hypercube: one point per stratum in every coordinate of a chunk", "[fast][lhs]") {
  // source: M. D. McKay, R. J. Beckman & W. J. Conover, Technometrics 21(2), 1979
  Circuit c = resistor_probes({"R1", "R2", "R3"}, 1e3);
  // Uniform and normal coordinates: a normal one is stratified in Phi(z).
  const std::vector<Variation> vs = {Variation({"R1", "R2"}, Distribution::uniform, 0.01),
                                     Variation({"R3"}, Distribution::normal, 0.01)};
  const detail::VariationModel model(c, vs, {}, {});
  REQUIRE(model.coordinates()[2].normal);
  for (std::size_t n : {std::size_t{1000}, std::size_t{37}}) {
    const auto pts = points_of(model, Sampler::latin_hypercube, 5, 0, 0, n, 3);
    for (std::size_t j = 0; j < 3; ++j) {
      std::vector<int> strata(n, 0);
      for (const auto& p : pts) {
        const double u = j == 2 ? detail::normal_cdf(p[j]) : p[j];
        ++strata[std::min(n - 1, static_cast<std::size_t>(u * static_cast<double>(n)))];
      }
      CAPTURE(n, j);
      CHECK(std::all_of(strata.begin(), strata.end(), [](int k) { return k == 1; }));
    }
  }
}

TEST_CASE("sobol and latin_hypercube: same seed, same bits on 1, 2 and 3 threads", "[slow][determinism]") {
  const Study s = amplifier();
  for (Sampler sampler : {Sampler::sobol, Sampler::latin_hypercube, Sampler::monte_carlo}) {
    CAPTURE(to_string(sampler));
    const YieldResult one = run(s, sampler, 3000, 4, 1);
    REQUIRE(one.passed > 0);
    REQUIRE(one.passed < one.samples);
    CHECK(one.replicates == 4);
    for (unsigned threads : {2u, 3u}) {
      const YieldResult other = run(s, sampler, 3000, 4, threads);
      CHECK(other.passed == one.passed);
      CHECK(bits(other.measurements[0].stats.mean()) == bits(one.measurements[0].stats.mean()));
      CHECK(bits(other.yield_standard_error) == bits(one.yield_standard_error));
      CHECK(bits(other.measurements[0].mean_standard_error) ==
            bits(one.measurements[0].mean_standard_error));
      std::size_t differing = 0;
      for (std::size_t i = 0; i < one.values.size(); ++i) differing += bits(one.values[i]) != bits(other.values[i]);
      CHECK(differing == 0);
    }
    const YieldResult reseeded = run(s, sampler, 3000, 4, 2, 256, 43);
    CHECK(reseeded.values != one.values);
  }
  SECTION("Sobol points do not depend on the chunk size") {
    const YieldResult a = run(s, Sampler::sobol, 2048, 2, 2, 256);
    const YieldResult b = run(s, Sampler::sobol, 2048, 2, 2, 100);
    CHECK(a.values == b.values);
    CHECK(a.passed == b.passed);
  }
}

TEST_CASE("replicate standard errors are the spread of the replicates", "[slow][replicates]") {
  const Study s = amplifier();
  // 1000 samples in 3 replicates: 334, 333, 333 points.
  const YieldResult r = run(s, Sampler::sobol, 1000, 3, 2);
  REQUIRE(r.values.size() == 1000);
  const std::size_t sizes[3] = {334, 333, 333};
  std::vector<double> yields, means;
  std::size_t at = 0;
  for (std::size_t size : sizes) {
    double pass = 0.0, sum = 0.0;
    for (std::size_t i = at; i < at + size; ++i) {
      pass += r.pass[i];
      sum += r.values[i];
    }
    yields.push_back(pass / static_cast<double>(size));
    means.push_back(sum / static_cast<double>(size));
    at += size;
  }
  CHECK_THAT(r.yield_standard_error, close_rel(sd_of(yields) / std::sqrt(3.0), 1e-9));
  CHECK_THAT(r.measurements[0].mean_standard_error, close_rel(sd_of(means) / std::sqrt(3.0), 1e-9));
  CHECK_THAT(r.specs[0].standard_error, close_rel(sd_of(yields) / std::sqrt(3.0), 1e-9));
  // Student t with 2 degrees of freedom, 97.5 % point 4.302653.
  // source: standard t table (from memory)
  CHECK_THAT(r.replicate_interval.high - r.yield, close_rel(4.302653 * r.yield_standard_error, 1e-5));
  // One replicate: no error estimate.
  const YieldResult single = run(s, Sampler::monte_carlo, 1000, 1, 2);
  CHECK(std::isnan(single.yield_standard_error));
  CHECK(std::isnan(single.measurements[0].mean_standard_error));
  // The automatic choice: 16 replicates for sobol, 1 for monte_carlo.
  RunOptions o;
  o.samples = 1024;
  o.sampler = Sampler::sobol;
  CHECK(s.run(o).replicates == 16);
  o.sampler = Sampler::monte_carlo;
  CHECK(s.run(o).replicates == 1);
  o.replicates = 2000;
  CHECK_THROWS_AS(s.run(o), RunError);
}

TEST_CASE("randomised QMC: the mean gain with ten times fewer samples", "[slow][qmc]") {
  // 32 replicates of 1024 scrambled Sobol points against the Monte Carlo error
  // sigma / sqrt(1024) of the same mean: the variance ratio is the factor by which plain
  // Monte Carlo needs more samples for the same error (docs/sampling.md has the sweep).
  // source: L'Ecuyer & Lemieux 2002 (replicates); Owen 1997 (convergence on smooth
  // integrands, from memory)
  const Study s = amplifier();
  const std::uint32_t replicates = 32, points = 1024;
  const YieldResult qmc = run(s, Sampler::sobol, std::uint64_t{replicates} * points, replicates, 2, 1024);
  const YieldResult mc = run(s, Sampler::monte_carlo, std::uint64_t{replicates} * points, replicates, 2, 1024);
  const double sigma = mc.measurements[0].stats.std_dev();
  const double mc_error = sigma / std::sqrt(static_cast<double>(points));
  // The standard deviation of one replicate's mean is sqrt(R) times the standard error.
  const double qmc_error = qmc.measurements[0].mean_standard_error * std::sqrt(double{replicates});
  const double mc_measured = mc.measurements[0].mean_standard_error * std::sqrt(double{replicates});
  CAPTURE(sigma, mc_error, mc_measured, qmc_error);
  // The Monte Carlo replicates agree with sigma / sqrt(n) (32 replicates: within 40 %).
  CHECK(std::abs(mc_measured / mc_error - 1.0) < 0.4);
  CHECK(mc_error * mc_error / (qmc_error * qmc_error) >= 10.0);
  // Both estimate the same mean.
  CHECK(std::abs(qmc.measurements[0].stats.mean() - mc.measurements[0].stats.mean()) <
        4.0 * mc.measurements[0].mean_standard_error);
}
