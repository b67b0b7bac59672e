#pragma once
// Reference (a): the instrumentation amplifier of studies/instrumentation_amp.toml in
// closed form, hand-derived from Kirchhoff's laws with finite-gain op-amps
// (V(+) - V(-) + Vos = Vout / A), evaluated on the same random draws as lotwise: the same
// generator (64-bit Mersenne Twister seeded per chunk of 1024 samples), the same Boost
// normal and uniform laws, the same coordinate order. It keeps what a hand-written
// Monte Carlo loop would: the mean and variance of each measurement and the pass count.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <stdexcept>
#include <string>
#include <vector>

#include <boost/random/normal_distribution.hpp>
#include <boost/random/uniform_01.hpp>

#include "variation/sampler.hpp"  // detail::Engine, detail::chunk_seed

namespace lotwise::bench {

/// The parameters of the amplifier, by name.
struct InAmp {
  double rf1, rf2, rg, r1, r2, r3, r4;
  double vos1, vos2, vos3;
  double a1, a2, a3;
};

/// V(out) - V(ref) with the inputs at in_p, in_n and the reference at ref; offsets
/// counted when `errors`.
inline double inamp_output(const InAmp& p, double in_p, double in_n, double ref, bool errors) {
  // Input stage: with i = (g_p - g_n) / RG, a_p = g_p + RF1 i and a_n = g_n - RF2 i, and
  // each op-amp's a = A (in + vos - g): a 2 x 2 system in g_p, g_n (Cramer's rule).
  const double k1 = p.rf1 / p.rg, k2 = p.rf2 / p.rg;
  const double a11 = 1.0 + k1 + p.a1, a12 = -k1, a21 = -k2, a22 = 1.0 + k2 + p.a2;
  const double b1 = p.a1 * (in_p + (errors ? p.vos1 : 0.0));
  const double b2 = p.a2 * (in_n + (errors ? p.vos2 : 0.0));
  const double det = a11 * a22 - a12 * a21;
  const double g_p = (b1 * a22 - a12 * b2) / det;
  const double g_n = (a11 * b2 - a21 * b1) / det;
  const double i = g_p - g_n;
  const double a_p = g_p + k1 * i, a_n = g_n - k2 * i;
  // Difference stage: d_p divides a_p and ref; d_n = (a_n R2 + out R1) / (R1 + R2);
  // out = A3 (d_p - d_n + vos3) solved for out.
  const double d_p = (a_p * p.r4 + ref * p.r3) / (p.r3 + p.r4);
  const double s = 1.0 / (p.r1 + p.r2);
  const double out = p.a3 * (d_p + (errors ? p.vos3 : 0.0) - a_n * p.r2 * s) /
                     (1.0 + p.a3 * p.r1 * s);
  return out - ref;
}

struct Moments {
  double n = 0, mean = 0, m2 = 0;
  void add(double x) {
    n += 1.0;
    const double d = x - mean;
    mean += d / n;
    m2 += d * (x - mean);
  }
  double std_dev() const { return n > 1 ? std::sqrt(m2 / (n - 1)) : 0.0; }
};

struct ClosedFormResult {
  std::uint64_t samples = 0;
  std::uint64_t passed = 0;
  Moments gain, cmrr, offset;
};

/// The Monte Carlo loop over the closed form. `coordinate_names` is the study's
/// coordinate order (Study::coordinate_names()), so the draws land where lotwise's do.
class ClosedFormInAmp {
 public:
  explicit ClosedFormInAmp(const std::vector<std::string>& coordinate_names) {
    const char* names[13] = {"RF1", "RF2", "RG", "R1", "R2", "R3", "R4",
                             "U1.offset", "U2.offset", "U3.offset",
                             "U1.open_loop_gain", "U2.open_loop_gain", "U3.open_loop_gain"};
    if (coordinate_names.size() != 13) throw std::runtime_error("expected 13 coordinates");
    for (std::size_t c = 0; c < 13; ++c) {
      std::size_t k = 0;
      while (k < 13 && coordinate_names[c] != names[k]) ++k;
      if (k == 13) throw std::runtime_error("unexpected coordinate " + coordinate_names[c]);
      target_[c] = k;
    }
  }

  ClosedFormResult run(std::uint64_t samples, std::uint64_t seed,
                       std::uint32_t chunk_size = 1024) const {
    ClosedFormResult r;
    boost::random::normal_distribution<double> normal;
    boost::random::uniform_01<double> uniform;
    double x[13];
    for (std::uint64_t begin = 0, k = 0; begin < samples; begin += chunk_size, ++k) {
      detail::Engine engine(detail::chunk_seed(seed, k));
      const std::uint64_t end = std::min<std::uint64_t>(samples, begin + chunk_size);
      for (std::uint64_t i = begin; i < end; ++i) {
        for (std::size_t c = 0; c < 13; ++c) {
          // Resistors and offsets are normal, gains uniform (coordinates 10..12 by name).
          x[target_[c]] = target_[c] < 10 ? normal(engine) : uniform(engine);
        }
        constexpr double resistor_sigma = 0.001 / 3.0, offset_sigma = 300e-6 / 3.0;
        InAmp p;
        p.rf1 = 24.9e3 * (1.0 + resistor_sigma * x[0]);
        p.rf2 = 24.9e3 * (1.0 + resistor_sigma * x[1]);
        p.rg = 498.0 * (1.0 + resistor_sigma * x[2]);
        p.r1 = 10e3 * (1.0 + resistor_sigma * x[3]);
        p.r2 = 10e3 * (1.0 + resistor_sigma * x[4]);
        p.r3 = 10e3 * (1.0 + resistor_sigma * x[5]);
        p.r4 = 10e3 * (1.0 + resistor_sigma * x[6]);
        p.vos1 = offset_sigma * x[7];
        p.vos2 = offset_sigma * x[8];
        p.vos3 = offset_sigma * x[9];
        p.a1 = 2e5 * (1.0 + 0.5 * (2.0 * x[10] - 1.0));
        p.a2 = 2e5 * (1.0 + 0.5 * (2.0 * x[11] - 1.0));
        p.a3 = 2e5 * (1.0 + 0.5 * (2.0 * x[12] - 1.0));
        const double gain = inamp_output(p, 0.5, -0.5, 0.0, false);
        const double common = inamp_output(p, 1.0, 1.0, 0.0, false);
        const double offset = inamp_output(p, 2.5, 2.5, 2.5, true);
        const double cmrr = 20.0 * std::log10(std::abs(gain) / std::abs(common));
        r.gain.add(gain);
        r.cmrr.add(cmrr);
        r.offset.add(offset);
        r.passed += gain >= 100.5 && gain <= 101.5 && cmrr >= 70.0 && offset >= -0.05 &&
                    offset <= 0.05;
        ++r.samples;
      }
    }
    return r;
  }

 private:
  std::size_t target_[13] = {};
};

}  // namespace lotwise::bench
