// How many samples each sampler needs for a given error on the mean of a smooth
// measurement (an amplifier's gain). For every sampler and sample count M, R independent
// replicates of M points are run; the standard deviation of their means is the error of
// an M-point estimate (L'Ecuyer & Lemieux 2002). Plain Monte Carlo's error is also
// sigma / sqrt(M), so it needs N = (sigma / error)^2 samples for a given error.
//
//   lotwise_qmc_efficiency [replicates]      (default 64)
//
// Prints one table per circuit and exits non-zero if the samplers disagree on the mean.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <utility>
#include <vector>

#include <lotwise/lotwise.hpp>

namespace {

struct Row {
  std::uint64_t points;
  double error[3];  // monte_carlo, latin_hypercube, sobol
  double yield_error[3];
};

constexpr lotwise::Sampler samplers[3] = {lotwise::Sampler::monte_carlo,
                                          lotwise::Sampler::latin_hypercube,
                                          lotwise::Sampler::sobol};

lotwise::YieldResult run(const lotwise::Study& study, lotwise::Sampler sampler,
                         std::uint64_t points, std::uint32_t replicates) {
  lotwise::RunOptions o;
  o.samples = points * replicates;
  o.replicates = replicates;
  o.sampler = sampler;
  o.seed = 2026;
  o.chunk_size = 4096;
  return study.run(o);
}

// Smallest sample count (log-log interpolation between the powers of two) at which a
// sampler's error reaches `target`; 0 if already at the smallest count.
double points_for(const std::vector<Row>& rows, int s, double target) {
  for (std::size_t i = 0; i < rows.size(); ++i) {
    if (rows[i].error[s] > target) continue;
    if (i == 0) return 0.0;
    const double x0 = std::log(double(rows[i - 1].points)), x1 = std::log(double(rows[i].points));
    const double y0 = std::log(rows[i - 1].error[s]), y1 = std::log(rows[i].error[s]);
    return std::exp(x0 + (std::log(target) - y0) * (x1 - x0) / (y1 - y0));
  }
  return NAN;
}

std::string count(double n) {
  char buf[32];
  if (std::isnan(n)) return "> table";
  if (n == 0.0) return "<= 64";
  std::snprintf(buf, sizeof buf, "%.0f", n);
  return buf;
}

bool study_table(const std::string& title, const lotwise::Study& study, std::uint32_t replicates) {
  const bool yields = !study.design().specs.empty();
  std::printf("\n## %s\n\n", title.c_str());
  std::printf("%d random coordinates; %u replicates per sample count M; error = standard "
              "deviation of an M-point estimate\n\n",
              static_cast<int>(study.coordinate_names().size()), replicates);
  std::printf("%8s  %12s  %12s  %12s  %14s\n", "M", "monte_carlo", "latin_hyp.", "sobol",
              "(MC/sobol)^2");
  std::vector<Row> rows;
  double sigma = 0.0, yield = 0.0;
  bool agree = true;
  for (std::uint64_t m = 64; m <= 16384; m *= 2) {
    Row row{m, {0, 0, 0}, {0, 0, 0}};
    double means[3], se_mc = 0.0;
    for (int s = 0; s < 3; ++s) {
      const lotwise::YieldResult r = run(study, samplers[s], m, replicates);
      const double root = std::sqrt(double(replicates));
      row.error[s] = r.measurements[0].mean_standard_error * root;
      row.yield_error[s] = r.yield_standard_error * root;
      means[s] = r.measurements[0].stats.mean();
      if (s == 0) {
        sigma = r.measurements[0].stats.std_dev();
        yield = r.yield;
        se_mc = r.measurements[0].mean_standard_error;
      }
    }
    // Every sampler estimates the same mean: within 5 Monte Carlo standard errors.
    for (int s = 1; s < 3; ++s) agree = agree && std::abs(means[s] - means[0]) <= 5.0 * se_mc;
    std::printf("%8llu  %12.3e  %12.3e  %12.3e  %14.0f\n", static_cast<unsigned long long>(m),
                row.error[0], row.error[1], row.error[2],
                row.error[0] * row.error[0] / (row.error[2] * row.error[2]));
    rows.push_back(row);
  }
  std::printf("\nsigma of the measurement %.4g\n\n", sigma);
  std::printf("Samples needed for the error sobol reaches with M samples (monte_carlo: "
              "(sigma / error)^2):\n\n");
  std::printf("%8s  %12s  %14s  %14s  %10s\n", "sobol M", "error", "monte_carlo N",
              "latin_hyp. N", "MC N / M");
  for (const Row& row : rows) {
    if (row.points != 64 && row.points != 256 && row.points != 1024 && row.points != 4096) continue;
    const double target = row.error[2];
    const double n_mc = (sigma / target) * (sigma / target);
    std::printf("%8llu  %12.3e  %14.0f  %14s  %10.0f\n", static_cast<unsigned long long>(row.points),
                target, n_mc, count(points_for(rows, 1, target)).c_str(), n_mc / double(row.points));
  }
  if (yields) {
    std::printf("\nError of the yield (%.4f), a non-smooth measurement:\n\n", yield);
    std::printf("%8s  %12s  %12s  %12s  %14s\n", "M", "monte_carlo", "latin_hyp.", "sobol",
                "(MC/sobol)^2");
    for (const Row& row : rows) {
      std::printf("%8llu  %12.3e  %12.3e  %12.3e  %14.1f\n",
                  static_cast<unsigned long long>(row.points), row.yield_error[0],
                  row.yield_error[1], row.yield_error[2],
                  row.yield_error[0] * row.yield_error[0] / (row.yield_error[2] * row.yield_error[2]));
    }
  }
  if (!agree) std::printf("\nERROR: the samplers disagree on the mean\n");
  return agree;
}

lotwise::Study amplifier() {
  // The circuit of tests/cpp/variation/samplers_test.cpp: a non-inverting amplifier of
  // gain 11 (R2 = 10 k, R1 = 1 k, RP = 100 ohm in series with the + input) on an op-amp
  // with A0 = 2e4; 1 % resistors at 3 sigma, A0 +-30 % uniform.
  lotwise::Design d;
  d.title = "Non-inverting amplifier, gain 11";
  auto& c = d.circuit;
  c.add_voltage_source("VIN", "in", "gnd", 0.0);
  c.add_resistor("RP", "in", "p", 100.0);
  c.add_opamp("U1", "p", "m", "out", {lotwise::OpAmpModel::finite_gain, 2e4});
  c.add_resistor("R1", "m", "gnd", 1e3);
  c.add_resistor("R2", "out", "m", 10e3);
  d.variations = {lotwise::Variation({"R*"}, lotwise::Distribution::normal, 0.01),
                  lotwise::Variation({"U1.open_loop_gain"}, lotwise::Distribution::uniform, 0.3)};
  d.measurements.push_back({"gain", lotwise::MeasurementKind::gain, {"VIN"}, {"out"}, 0.0});
  return lotwise::Study(std::move(d));
}

lotwise::Study load_cell() {
  // The instrumentation amplifier of docs/examples/load_cell_amp_1pct.toml, its
  // differential gain and its gain spec only.
  lotwise::Design d = lotwise::load_design(std::string(LOTWISE_EXAMPLES_DIR) + "/load_cell_amp_1pct.toml");
  std::vector<lotwise::Measurement> keep;
  for (const auto& m : d.measurements) {
    if (m.name == "gain") keep.push_back(m);
  }
  d.measurements = keep;
  std::vector<lotwise::Spec> specs;
  for (const auto& spec : d.specs) {
    if (spec.measurement == "gain") specs.push_back(spec);
  }
  d.specs = specs;
  return lotwise::Study(std::move(d));
}

}  // namespace

int main(int argc, char** argv) {
  const std::uint32_t replicates = argc > 1 ? static_cast<std::uint32_t>(std::atoi(argv[1])) : 64;
  if (replicates < 2) {
    std::fprintf(stderr, "usage: lotwise_qmc_efficiency [replicates >= 2]\n");
    return 2;
  }
  bool ok = study_table("Non-inverting amplifier, gain 11: gain", amplifier(), replicates);
  ok = study_table("Load-cell instrumentation amplifier (load_cell_amp_1pct.toml): gain",
                   load_cell(), replicates) && ok;
  return ok ? 0 : 1;
}
