// The per-sample fast paths (the monte_carlo draws, VariationModel::prepare and apply)
// must give the values of the straightforward computation bit for bit: Boost.Random's
// draws on mt19937_64, and each law applied term by term in the model's order.
#include <cmath>
#include <cstdint>
#include <cstring>
#include <map>
#include <string>
#include <vector>

#include <Eigen/Cholesky>
#include <Eigen/Dense>
#include <boost/math/distributions/triangular.hpp>
#include <boost/random/normal_distribution.hpp>
#include <boost/random/uniform_01.hpp>

#include "variation/common_draws.hpp"
#include "variation/sampler.hpp"
#include "variation/spread.hpp"
#include "variation_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

std::uint64_t bits(double x) {
  std::uint64_t b;
  std::memcpy(&b, &x, sizeof b);
  return b;
}

// Resistors of distinct nominal values, each probed by a 1 A source.
Circuit resistors(const std::vector<std::pair<std::string, double>>& parts) {
  Circuit c;
  for (const auto& [name, ohms] : parts) {
    c.add_current_source("I" + name, "gnd", "n" + name, 1.0);
    c.add_resistor(name, "n" + name, "gnd", ohms);
  }
  return c;
}

Variation law(std::vector<std::string> targets, Distribution d, double t) {
  return Variation(std::move(targets), d, t);
}

// Every law, lots, a matched network with tracking, absolute spreads and coefficients, and
// correlations that feed normal, uniform-input and plain laws.
struct Mixed {
  Circuit circuit = resistors({{"RA1", 1e3},  {"RA2", 2.2e3}, {"RB", 4.7e3},  {"RC1", 330.0},
                               {"RC2", 680.0}, {"RD1", 1.5e3}, {"RD2", 3.3e3}, {"RE1", 100.0},
                               {"RE2", 150.0}, {"RF1", 10e3},  {"RF2", 22e3},  {"RN1", 10e3},
                               {"RN2", 10e3},  {"RN3", 20e3},  {"RN4", 5e3},   {"RG", 47e3},
                               {"RH", 12e3}});
  std::vector<Variation> variations;
  std::vector<Correlation> correlations;

  Mixed() {
    Variation a = law({"RA1", "RA2"}, Distribution::truncated_normal, 0.01);
    a.lot_tolerance = 0.005;
    a.lot_distribution = Distribution::triangular;
    a.tempco = 50e-6;
    a.tempco_tolerance = 20e-6;
    a.tempco_distribution = Distribution::normal;
    Variation b = law({"RB"}, Distribution::binned, 0.05);
    b.inner_tolerance = 0.01;
    b.tempco = -30e-6;
    Variation c = law({"RC*"}, Distribution::log_normal, 0.01);
    Variation d = law({"RD*"}, Distribution::triangular, 0.005);
    d.lot_tolerance = 0.002;
    d.lot_distribution = Distribution::truncated_normal;
    Variation e = law({"RE*"}, Distribution::normal, 3.0);
    e.relative = false;
    e.tempco = 0.01;
    e.tempco_relative = false;
    e.tempco_tolerance = 0.005;
    Variation f = law({"RF*"}, Distribution::uniform, 0.02);
    f.lot_tolerance = 0.01;
    f.lot_distribution = Distribution::uniform;
    Variation n = law({"RN*"}, Distribution::normal, 0.001);
    n.ratio_tolerance = 0.0001;
    n.lot_tolerance = 0.0005;
    n.tempco_tolerance = 25e-6;
    n.tempco_tracking = 2e-6;
    variations = {a, b, c, d, e, f, n, law({"RG"}, Distribution::normal, 0.01),
                  law({"RH"}, Distribution::uniform, 0.01)};
    correlations = {Correlation{{"RC1", "RD1", "RA1"}, 0.5}, Correlation{{"RE1", "RE2"}, 0.6},
                    Correlation{{"RF1", "RB", "RG"}, -0.3}};
  }
};

// The deviation of law `d` (tolerance t, sigmas k, inner band) at coordinate x: a normal
// score for normal and log_normal, else uniform (docs/design-file.md, "Laws").
double deviation_of(Distribution d, double t, double k, double inner, double x) {
  switch (d) {
    case Distribution::normal: return (t / k) * x;
    case Distribution::uniform: return t * (2.0 * x - 1.0);
    case Distribution::triangular:
      return boost::math::quantile(boost::math::triangular_distribution<double>(-t, 0.0, t), x);
    case Distribution::truncated_normal: {
      const double sigma = t / k, low = detail::normal_cdf(-k), width = 1.0 - 2.0 * low;
      return x < 0.5 ? sigma * detail::normal_quantile(low + x * width)
                     : -sigma * detail::normal_quantile(low + (1.0 - x) * width);
    }
    case Distribution::log_normal: return std::expm1(std::log1p(t) / k * x);
    case Distribution::binned: {
      const double sigma = t / k, low = detail::normal_cdf(-k);
      const double width = detail::normal_cdf(-inner / sigma) - low;
      return x < 0.5 ? sigma * detail::normal_quantile(low + 2.0 * x * width)
                     : -sigma * detail::normal_quantile(low + 2.0 * (1.0 - x) * width);
    }
    case Distribution::fixed: return 0.0;
  }
  return 0.0;
}

bool wants_normal(Distribution d) {
  return d == Distribution::normal || d == Distribution::log_normal;
}

// The parameter values of one point, computed term by term from the laws.
std::vector<double> reference_theta(const Mixed& m, const detail::VariationModel& model,
                                    const double* point, std::size_t q) {
  std::map<std::string, std::size_t> at;
  for (std::size_t c = 0; c < model.dimension(); ++c) at[model.coordinates()[c].name] = c;
  std::vector<double> x(point, point + model.dimension());
  // Correlation: the correlated part coordinates in coordinate order, mixed by the lower
  // Cholesky factor of their matrix (Gaussian copula).
  std::vector<std::string> names;
  std::vector<std::size_t> slots;
  for (const auto& c : m.correlations) {
    for (const auto& p : c.parameters) names.push_back(p);
  }
  for (std::size_t c = 0; c < model.dimension(); ++c) {
    for (const auto& n : names) {
      if (model.coordinates()[c].name == n) {
        slots.push_back(c);
        break;
      }
    }
  }
  const auto size = static_cast<Eigen::Index>(slots.size());
  Eigen::MatrixXd matrix = Eigen::MatrixXd::Identity(size, size);
  for (const auto& c : m.correlations) {
    for (const auto& a : c.parameters) {
      for (const auto& b : c.parameters) {
        if (a == b) continue;
        Eigen::Index i = 0, j = 0;
        for (Eigen::Index s = 0; s < size; ++s) {
          if (slots[static_cast<std::size_t>(s)] == at.at(a)) i = s;
          if (slots[static_cast<std::size_t>(s)] == at.at(b)) j = s;
        }
        matrix(i, j) = c.coefficient;
      }
    }
  }
  const Eigen::MatrixXd l = Eigen::LLT<Eigen::MatrixXd>(matrix).matrixL();
  for (Eigen::Index i = 0; i < size; ++i) {
    double sum = 0.0;
    for (Eigen::Index j = 0; j <= i; ++j) sum += l(i, j) * point[slots[static_cast<std::size_t>(j)]];
    x[slots[static_cast<std::size_t>(i)]] = sum;
  }
  auto correlated = [&](std::size_t c) {
    for (std::size_t s : slots) {
      if (s == c) return true;
    }
    return false;
  };
  // A law's input: a correlated coordinate is a normal score, Phi(z) for a uniform law.
  auto input = [&](std::size_t c, Distribution d) {
    return correlated(c) && !wants_normal(d) ? detail::normal_cdf(x[c]) : x[c];
  };
  const Temperature& temperature = model.temperature();
  double celsius = temperature.reference;
  if (temperature.drawn) {
    celsius = temperature.low + (temperature.high - temperature.low) * x[at.at("temperature")];
  } else if (!temperature.operating.empty()) {
    celsius = temperature.operating[q];
  }
  const double shift = celsius - temperature.reference;

  std::vector<double> theta;
  for (const auto& p : m.circuit.parameters()) theta.push_back(p.nominal);
  for (const Variation& v : m.variations) {
    std::vector<std::size_t> members;
    for (std::size_t p = 0; p < m.circuit.parameters().size(); ++p) {
      for (const auto& pattern : v.targets) {
        if (detail::matches(pattern, m.circuit.parameters()[p].name)) members.push_back(p);
      }
    }
    std::string group;
    for (const auto& t : v.targets) group += (group.empty() ? "" : ",") + t;
    const bool matched = v.ratio_tolerance > 0.0;
    for (std::size_t p : members) {
      const std::string name = m.circuit.parameters()[p].name;
      const double nominal = m.circuit.parameters()[p].nominal;
      const double scale = v.relative ? std::abs(nominal) : 1.0;
      // Value: lot share, then a network's common share, then the part's own.
      double deviation = 0.0;
      if (v.lot_tolerance > 0.0) {
        const std::size_t c = at.at("lot of " + group);
        deviation += deviation_of(v.lot_distribution, v.lot_tolerance, v.sigmas, 0.0,
                                  input(c, v.lot_distribution)) * scale;
      }
      if (matched) {
        // Member = common + own, the ratio of two spreading by sqrt(2) own.
        const double sigma = v.tolerance / v.sigmas;
        const double own = v.ratio_tolerance / v.sigmas / std::sqrt(2.0);
        const double common = std::sqrt(std::max(0.0, sigma * sigma - own * own));
        deviation += deviation_of(Distribution::normal, common * v.sigmas, v.sigmas, 0.0,
                                  x[at.at("network of " + group)]) * scale;
        deviation += deviation_of(Distribution::normal, own * v.sigmas, v.sigmas, 0.0,
                                  x[at.at(name)]) * scale;
      } else {
        deviation += deviation_of(v.distribution, v.tolerance, v.sigmas, v.inner_tolerance,
                                  input(at.at(name), v.distribution)) * scale;
      }
      // Coefficient: nominal, then a part's (or the network's) draw, then its tracking.
      double coefficient = v.tempco;
      if (v.tempco_tolerance > 0.0) {
        const std::size_t c = at.at(matched ? "network tempco of " + group : name + ".tempco");
        coefficient += deviation_of(v.tempco_distribution, v.tempco_tolerance, v.sigmas, 0.0, x[c]);
      }
      if (matched && v.tempco_tracking > 0.0) {
        coefficient += deviation_of(Distribution::uniform, 0.5 * v.tempco_tracking, v.sigmas, 0.0,
                                    x[at.at(name + ".tempco_tracking")]);
      }
      const double value = nominal + deviation;
      theta[p] = v.tempco_relative ? value * (1.0 + coefficient * shift)
                                   : value + coefficient * shift;
    }
  }
  return theta;
}

void check_against_reference(const Mixed& m, const Temperature& temperature, Sampler sampler) {
  const detail::VariationModel model(m.circuit, m.variations, m.correlations, temperature);
  const detail::SobolDirections directions(model.dimension());
  constexpr std::size_t count = 4096;
  detail::PointStream stream(model, sampler, count, &directions);
  stream.start(11, 3, 0, 0, count);
  const std::size_t d = model.dimension(), p_count = m.circuit.parameters().size();
  std::vector<double> points(count * d);
  for (std::size_t i = 0; i < count; ++i) {
    const double* point = stream.next();
    std::copy(point, point + d, &points[i * d]);
  }
  // The one-pass mapping, in blocks of 1 to 16 builds as the chunk evaluator calls it.
  std::vector<double> mapped(count * p_count);
  std::vector<detail::BuildScratch> mapped_scratch(count, model.make_scratch());
  if (model.maps_in_one_pass()) {
    for (std::size_t i = 0; i < count; ++i) {
      for (std::size_t p = 0; p < p_count; ++p) mapped[i * p_count + p] = m.circuit.parameters()[p].nominal;
    }
    for (std::size_t i = 0, block = 1; i < count; i += block, block = block % 16 + 1) {
      const std::size_t n = std::min(block, count - i);
      model.prepare_values(&points[i * d], n, &mapped_scratch[i], &mapped[i * p_count], p_count);
    }
  }
  detail::BuildScratch scratch = model.make_scratch();
  std::vector<double> theta(p_count);
  std::size_t differing = 0;
  for (std::size_t i = 0; i < count; ++i) {
    const double* point = &points[i * d];
    model.prepare(point, scratch);
    const double* direct = &mapped[i * p_count];
    if (model.maps_in_one_pass()) {
      // The same values at every temperature, and the same drawn temperature.
      CHECK(bits(mapped_scratch[i].temperature) == bits(scratch.temperature));
    }
    for (std::size_t q = 0; q < model.evaluations(); ++q) {
      for (std::size_t p = 0; p < theta.size(); ++p) theta[p] = m.circuit.parameters()[p].nominal;
      model.apply(scratch, model.temperature_of(scratch, q), theta.data());
      const std::vector<double> want = reference_theta(m, model, point, q);
      for (std::size_t p = 0; p < theta.size(); ++p) {
        const bool one_pass_differs = model.maps_in_one_pass() && bits(direct[p]) != bits(want[p]);
        if (bits(theta[p]) != bits(want[p]) || one_pass_differs) {
          if (differing++ < 5) {
            CAPTURE(i, q, m.circuit.parameters()[p].name, theta[p], direct[p], want[p]);
            CHECK(bits(theta[p]) == bits(want[p]));
            CHECK(!one_pass_differs);
          }
        }
      }
    }
  }
  CHECK(differing == 0);
}

}  // namespace

TEST_CASE("the fast engine gives mt19937_64's outputs", "[fast][identity]") {
  // source: ISO/IEC 14882:2011 [rand.predef]: the 10000th output of a default-constructed
  // mt19937_64 (seed 5489) is 9981545732273789042.
  detail::PeekEngine published;
  published.seed(5489u);
  std::uint64_t last = 0;
  for (int i = 0; i < 10000; ++i) last = published();
  CHECK(last == 9981545732273789042ull);

  for (std::uint64_t seed : {std::uint64_t{0}, std::uint64_t{1}, detail::chunk_seed(7, 3),
                             ~std::uint64_t{0}}) {
    detail::Engine boost_engine(seed);
    detail::PeekEngine engine;
    engine.seed(seed);
    std::size_t differing = 0;
    for (int i = 0; i < 5000; ++i) {
      // A peek leaves the output to be taken.
      if (i % 3 == 0 && engine.peek() != engine.peek()) ++differing;
      if (engine() != boost_engine()) ++differing;
    }
    CHECK(differing == 0);
  }
}

TEST_CASE("every draw path this machine has makes the common draws one by one would",
          "[fast][identity]") {
  // Outputs of mt19937_64 with normal and uniform coordinates mixed, some uniform ones
  // forced to 2^64 - 1 (uniform_01 gives 1 from it, which it rejects); prefixes of many
  // starts and lengths, so that vectors are cut by rejections and by the end.
  detail::Engine engine(2024);
  constexpr std::size_t n = 4096;
  std::vector<std::uint64_t> outputs(n);
  std::vector<std::int64_t> kinds(n);
  for (std::size_t i = 0; i < n; ++i) {
    outputs[i] = engine();
    const bool uniform = i % 7 == 3 || i % 11 == 0;
    kinds[i] = uniform ? 0 : -1;
    if (uniform && i % 5 == 0) outputs[i] = ~std::uint64_t{0};
  }
  const std::vector<detail::DrawPath> paths = detail::draw_paths_here();
  CHECK(paths.front() == detail::DrawPath::portable);
  for (const detail::DrawPath path : paths) {
    CAPTURE(static_cast<int>(path));
    std::size_t differing = 0, wrong_length = 0, cut = 0;
    std::vector<double> out(n);
    for (std::size_t start = 0; start < n; start += 37) {
      for (std::size_t length : {1, 3, 4, 5, 8, 9, 16, 61, 4096}) {
        const std::size_t count = std::min(length, n - start);
        const std::size_t got =
            detail::draw_common_prefix(path, &outputs[start], &kinds[start], count, out.data());
        std::size_t want = count;
        for (std::size_t j = 0; j < count; ++j) {
          double value = 0.0;
          if (!detail::draw_common(outputs[start + j], kinds[start + j] != 0, &value)) {
            want = j;
            break;
          }
          if (j < got && bits(out[j]) != bits(value)) ++differing;
        }
        wrong_length += got != want;
        cut += want < count;
      }
    }
    CHECK(differing == 0);
    CHECK(wrong_length == 0);
    CHECK(cut > 100);  // rejections were met
  }
}

TEST_CASE("monte_carlo points are Boost.Random's normal and uniform draws", "[fast][identity]") {
  // Runs of both kinds, so that the sampler switches between them within a point.
  const Circuit c = resistor_probes({"R1", "R2", "R3", "R4", "R5", "R6"}, 1e3);
  const std::vector<Variation> variations = {law({"R1", "R2"}, Distribution::normal, 0.01),
                                             law({"R3"}, Distribution::uniform, 0.01),
                                             law({"R4"}, Distribution::log_normal, 0.01),
                                             law({"R5", "R6"}, Distribution::triangular, 0.01)};
  const detail::VariationModel model(c, variations, {}, Temperature{});
  constexpr std::size_t count = 200000;  // over a million draws: rejections and the tail
  detail::PointStream stream(model, Sampler::monte_carlo, count, nullptr);
  for (std::uint64_t chunk : {0u, 5u}) {
    stream.start(99, chunk, 0, 0, count);
    detail::Engine engine(detail::chunk_seed(99, chunk));
    boost::random::normal_distribution<double> normal;
    boost::random::uniform_01<double> uniform;
    std::size_t differing = 0;
    // Chunk 0 one point at a time, chunk 5 in blocks of 1 to 16 points.
    const std::size_t d = model.dimension();
    std::vector<double> block(detail::PointStream::most_points * d);
    for (std::size_t i = 0, n = 1; i < count; i += n, n = chunk == 0 ? 1 : n % 16 + 1) {
      n = std::min(n, count - i);
      const double* points = chunk == 0 ? stream.next() : stream.next_into(block.data(), n);
      for (std::size_t j = 0; j < n * d; ++j) {
        const double want = model.coordinates()[j % d].normal ? normal(engine) : uniform(engine);
        if (bits(points[j]) != bits(want)) ++differing;
      }
    }
    CHECK(differing == 0);
  }
}

TEST_CASE("prepare and apply give every law's value bit for bit", "[fast][identity]") {
  const Mixed m;
  Temperature operating;
  operating.reference = 20.0;
  operating.operating = {-40.0, 20.0, 85.0};
  Temperature drawn;
  drawn.drawn = true;
  drawn.low = -40.0;
  drawn.high = 85.0;
  for (Sampler sampler : {Sampler::monte_carlo, Sampler::sobol, Sampler::latin_hypercube}) {
    CAPTURE(to_string(sampler));
    check_against_reference(m, Temperature{}, sampler);
    check_against_reference(m, operating, sampler);
    check_against_reference(m, drawn, sampler);
  }
}

TEST_CASE("a model of plain laws maps a point to values in one pass, bit for bit", "[fast][identity]") {
  // Normal and uniform laws, relative and absolute, no lots, correlations or coefficients:
  // prepare_values() must give prepare() and apply()'s bits (checked in
  // check_against_reference); the mixed model must not take the one-pass path.
  Mixed m;
  Variation absolute = law({"RE*"}, Distribution::normal, 3.0);
  absolute.relative = false;
  m.variations = {law({"RA*", "RB", "RC*"}, Distribution::normal, 0.01),
                  law({"RD*", "RF*"}, Distribution::uniform, 0.02), absolute,
                  law({"RG"}, Distribution::normal, 0.001)};
  m.correlations.clear();
  Temperature drawn;
  drawn.drawn = true;
  drawn.low = -40.0;
  drawn.high = 85.0;
  for (const Temperature& temperature : {Temperature{}, drawn}) {
    CHECK(detail::VariationModel(m.circuit, m.variations, m.correlations, temperature).maps_in_one_pass());
    for (Sampler sampler : {Sampler::monte_carlo, Sampler::sobol, Sampler::latin_hypercube}) {
      CAPTURE(to_string(sampler));
      check_against_reference(m, temperature, sampler);
    }
  }
  const Mixed mixed;
  CHECK(!detail::VariationModel(mixed.circuit, mixed.variations, mixed.correlations, Temperature{})
             .maps_in_one_pass());
  // A temperature coefficient alone rules it out.
  Variation with_tempco = law({"RH"}, Distribution::normal, 0.01);
  with_tempco.tempco = 100e-6;
  m.variations.push_back(with_tempco);
  CHECK(!detail::VariationModel(m.circuit, m.variations, m.correlations, Temperature{}).maps_in_one_pass());
}

TEST_CASE("points drawn in blocks are the points drawn one at a time", "[fast][identity]") {
  const Mixed m;
  const detail::VariationModel model(m.circuit, m.variations, m.correlations, Temperature{});
  const detail::SobolDirections directions(model.dimension());
  const std::size_t d = model.dimension();
  constexpr std::size_t count = 3000;
  for (Sampler sampler : {Sampler::monte_carlo, Sampler::sobol, Sampler::latin_hypercube}) {
    INFO(to_string(sampler));
    detail::PointStream single(model, sampler, count, &directions), blocks(model, sampler, count, &directions);
    single.start(21, 2, 1, 0, count);
    blocks.start(21, 2, 1, 0, count);
    std::vector<double> block(detail::PointStream::most_points * d);
    std::size_t differing = 0;
    for (std::size_t i = 0, n = 1; i < count; i += n, n = n % 16 + 1) {
      n = std::min(n, count - i);
      blocks.next_into(block.data(), n);
      for (std::size_t p = 0; p < n; ++p) {
        const double* want = single.next();
        for (std::size_t j = 0; j < d; ++j) differing += bits(block[p * d + j]) != bits(want[j]);
      }
    }
    CHECK(differing == 0);
  }
}
