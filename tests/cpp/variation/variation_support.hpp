#pragma once
// Helpers of the variation tests: goodness-of-fit statistics and direct draws from a
// variation model (no circuit solve), so that laws can be checked on millions of values.
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <functional>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include "engine_support.hpp"
#include "variation/model.hpp"
#include "variation/points.hpp"

namespace lotwise::testing {

// Limiting Kolmogorov distribution, K(x) = 1 - 2 sum_k (-1)^(k-1) exp(-2 k^2 x^2).
// source: Kolmogorov (1933) limiting distribution of sqrt(n) D_n (from memory)
inline double kolmogorov_cdf(double x) {
  double sum = 0.0;
  for (int k = 1; k <= 100; ++k) {
    sum += ((k % 2) ? 1.0 : -1.0) * std::exp(-2.0 * k * k * x * x);
  }
  return 1.0 - 2.0 * sum;
}

// The 1 % critical value of D_n for a fully specified law, using Stephens' finite-n
// modification D (sqrt(n) + 0.12 + 0.11/sqrt(n)) ~ K.
// source: M. A. Stephens, J. R. Statist. Soc. B 32(1), 1970 (from memory)
inline double ks_critical_1pct(std::size_t n) {
  double lo = 1.0, hi = 3.0;
  for (int i = 0; i < 200; ++i) {
    const double mid = 0.5 * (lo + hi);
    (kolmogorov_cdf(mid) < 0.99 ? lo : hi) = mid;
  }
  const double rn = std::sqrt(static_cast<double>(n));
  return lo / (rn + 0.12 + 0.11 / rn);
}

/// Kolmogorov-Smirnov statistic of sorted values against a distribution function.
inline double ks_sorted(const std::vector<double>& xs, const std::function<double(double)>& cdf) {
  const double n = static_cast<double>(xs.size());
  double d = 0.0;
  for (std::size_t i = 0; i < xs.size(); ++i) {
    const double f = cdf(xs[i]);
    d = std::max({d, (static_cast<double>(i) + 1.0) / n - f, f - static_cast<double>(i) / n});
  }
  return d;
}

/// Values of some parameters in `n` builds drawn straight from the variation model,
/// at temperature `celsius` (the reference if NaN). Columns follow `names`.
struct Draws {
  std::vector<std::vector<double>> columns;
};

inline Draws draw(const Circuit& circuit, const std::vector<Variation>& variations,
                  const std::vector<std::string>& names, std::size_t n, std::uint64_t seed,
                  Sampler sampler = Sampler::monte_carlo,
                  const std::vector<Correlation>& correlations = {},
                  const Temperature& temperature = {},
                  double celsius = std::numeric_limits<double>::quiet_NaN(),
                  std::uint64_t replicate = 0) {
  const detail::VariationModel model(circuit, variations, correlations, temperature);
  std::unique_ptr<detail::SobolDirections> directions;
  if (sampler == Sampler::sobol) {
    directions = std::make_unique<detail::SobolDirections>(model.dimension());
  }
  constexpr std::uint32_t chunk = 4096;
  detail::PointStream points(model, sampler, chunk, directions.get());
  detail::BuildScratch scratch = model.make_scratch();
  std::vector<double> theta;
  for (const auto& p : circuit.parameters()) theta.push_back(p.nominal);
  std::vector<std::size_t> index;
  for (const auto& name : names) index.push_back(circuit.find_parameter(name));
  Draws out;
  out.columns.assign(names.size(), {});
  for (auto& c : out.columns) c.reserve(n);
  for (std::uint64_t k = 0; k * chunk < n; ++k) {
    const std::size_t count = static_cast<std::size_t>(std::min<std::uint64_t>(chunk, n - k * chunk));
    points.start(seed, k, replicate, k * chunk, count);
    for (std::size_t i = 0; i < count; ++i) {
      model.prepare(points.next(), scratch);
      const double t = std::isnan(celsius) ? model.temperature_of(scratch, 0) : celsius;
      model.apply(scratch, t, theta.data());
      for (std::size_t c = 0; c < index.size(); ++c) out.columns[c].push_back(theta[index[c]]);
    }
  }
  return out;
}

/// A 1 A current source into each listed resistor to ground: V(node) = R, volt for ohm.
inline Circuit resistor_probes(const std::vector<std::string>& names, double ohms) {
  Circuit c;
  for (const auto& name : names) {
    c.add_current_source("I" + name, "gnd", "n" + name, 1.0);
    c.add_resistor(name, "n" + name, "gnd", ohms);
  }
  return c;
}

inline double mean_of(const std::vector<double>& xs) {
  double s = 0.0;
  for (double x : xs) s += x;
  return s / static_cast<double>(xs.size());
}

inline double sd_of(const std::vector<double>& xs) {
  const double m = mean_of(xs);
  double s = 0.0;
  for (double x : xs) s += (x - m) * (x - m);
  return std::sqrt(s / static_cast<double>(xs.size() - 1));
}

inline double correlation_of(const std::vector<double>& a, const std::vector<double>& b) {
  const double ma = mean_of(a), mb = mean_of(b);
  double sab = 0.0, saa = 0.0, sbb = 0.0;
  for (std::size_t i = 0; i < a.size(); ++i) {
    sab += (a[i] - ma) * (b[i] - mb);
    saa += (a[i] - ma) * (a[i] - ma);
    sbb += (b[i] - mb) * (b[i] - mb);
  }
  return sab / std::sqrt(saa * sbb);
}

}  // namespace lotwise::testing
