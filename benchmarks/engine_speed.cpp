// Samples per second of lotwise's Monte Carlo loop on the reference studies, beside the
// hand-written closed form of the instrumentation amplifier (reference a) measured in
// the same run, and the parts of one sample (draws, evaluation, the factorisation with
// and without the reused pattern) for docs/performance.md.
//
//   lotwise_engine_speed [--benchmark_filter=...] [--benchmark_format=json]
//
// Every case reports `samples_per_s`: per CPU second of the process for the
// single-thread cases, per wall second for BM_inamp_wall (thread scaling). The
// program first checks that lotwise and the closed form agree on the same draws and
// exits non-zero if they do not.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <string>
#include <vector>

#include <benchmark/benchmark.h>

#include <lotwise/lotwise.hpp>

#include "closed_form_inamp.hpp"
#include "filter_chain.hpp"
#include "mna/layout.hpp"
#include "study/plan.hpp"
#include "variation/model.hpp"
#include "variation/points.hpp"

namespace {

using namespace lotwise;

std::string study_path(const char* name) {
  return std::string(LOTWISE_BENCH_STUDIES_DIR) + "/" + name;
}

const Study& inamp() {
  static const Study s(load_design(study_path("instrumentation_amp.toml")));
  return s;
}
const Study& schmitt() {
  static const Study s(load_design(study_path("schmitt_trigger.toml")));
  return s;
}
const Study& chain(int stages) {
  static std::vector<std::unique_ptr<Study>> made(64);
  if (!made[static_cast<std::size_t>(stages)]) {
    made[static_cast<std::size_t>(stages)] = std::make_unique<Study>(bench::filter_chain(stages));
  }
  return *made[static_cast<std::size_t>(stages)];
}

void set_rate(benchmark::State& state, std::uint64_t samples_per_iteration) {
  state.counters["samples_per_s"] = benchmark::Counter(
      static_cast<double>(samples_per_iteration) * static_cast<double>(state.iterations()),
      benchmark::Counter::kIsRate);
  state.counters["samples"] = static_cast<double>(samples_per_iteration);
}

void run_study(benchmark::State& state, const Study& study, std::uint64_t samples,
               bool attribution, unsigned threads) {
  RunOptions o;
  o.samples = samples;
  o.seed = 7;
  o.threads = threads;
  o.attribution = attribution;
  for (auto _ : state) {
    YieldResult r = study.run(o);
    benchmark::DoNotOptimize(r.passed);
  }
  set_rate(state, samples);
}

// ---- the reference studies through Study::run -------------------------------------

void BM_inamp(benchmark::State& state) {
  run_study(state, inamp(), 1u << 20, state.range(0) != 0, static_cast<unsigned>(state.range(1)));
}
// Single-thread cases are timed in CPU time (the machine may be shared); the thread
// scaling pair in wall time.
BENCHMARK(BM_inamp)->ArgNames({"attribution", "threads"})->Args({0, 1})->Args({1, 1})
    ->Unit(benchmark::kMillisecond)->MeasureProcessCPUTime()->MinTime(1.0);
BENCHMARK(BM_inamp)->Name("BM_inamp_wall")->ArgNames({"attribution", "threads"})
    ->Args({0, 1})->Args({0, 2})->Unit(benchmark::kMillisecond)->UseRealTime()->MinTime(1.0);

void BM_schmitt(benchmark::State& state) {
  run_study(state, schmitt(), 1u << 19, state.range(0) != 0, 1);
}
BENCHMARK(BM_schmitt)->ArgNames({"attribution"})->Arg(0)->Arg(1)
    ->Unit(benchmark::kMillisecond)->MeasureProcessCPUTime()->MinTime(1.0);

// Cost per sample against the size of the network: the compact L+U value count of the
// AC pattern (the nonzeros the elimination touches) is reported beside the rate.
void BM_filter_chain(benchmark::State& state) {
  const int stages = static_cast<int>(state.range(0));
  const Study& study = chain(stages);
  std::vector<double> theta = study.nominal_parameters();
  NetworkWorkspace ws = study.network().make_workspace();
  study.network().prepare_ac(theta.data(), 1e3, ws);
  const auto& lu = ws.data().ac_patterns.at(0).lu;
  run_study(state, study, stages >= 24 ? 1u << 14 : 1u << 16, state.range(1) != 0, 1);
  state.counters["unknowns"] = static_cast<double>(study.network().size());
  state.counters["nonzeros_LU"] = static_cast<double>(lu.nonzeros());
  state.counters["updates_LU"] = static_cast<double>(lu.updates());
}
BENCHMARK(BM_filter_chain)->ArgNames({"stages", "attribution"})
    ->Args({2, 0})->Args({4, 0})->Args({8, 0})->Args({14, 0})->Args({14, 1})->Args({24, 0})
    ->Args({48, 0})
    ->Unit(benchmark::kMillisecond)->MeasureProcessCPUTime()->MinTime(1.0);

// ---- reference (a): the closed form on the same draws -----------------------------

void BM_inamp_closed_form(benchmark::State& state) {
  const bench::ClosedFormInAmp reference(inamp().coordinate_names());
  const std::uint64_t samples = 1u << 20;
  for (auto _ : state) {
    bench::ClosedFormResult r = reference.run(samples, 7);
    benchmark::DoNotOptimize(r.passed);
  }
  set_rate(state, samples);
}
BENCHMARK(BM_inamp_closed_form)
    ->Unit(benchmark::kMillisecond)->MeasureProcessCPUTime()->MinTime(1.0);

// The draws alone, as the closed form makes them: the generator and the two laws.
void BM_inamp_draws_only(benchmark::State& state) {
  const std::uint64_t samples = 1u << 20;
  boost::random::normal_distribution<double> normal;
  boost::random::uniform_01<double> uniform;
  for (auto _ : state) {
    double sum = 0.0;
    for (std::uint64_t begin = 0, k = 0; begin < samples; begin += 1024, ++k) {
      detail::Engine engine(detail::chunk_seed(7, k));
      for (std::uint64_t i = 0; i < 1024; ++i) {
        for (int c = 0; c < 10; ++c) sum += normal(engine);
        for (int c = 0; c < 3; ++c) sum += uniform(engine);
      }
    }
    benchmark::DoNotOptimize(sum);
  }
  set_rate(state, samples);
}
BENCHMARK(BM_inamp_draws_only)
    ->Unit(benchmark::kMillisecond)->MeasureProcessCPUTime()->MinTime(0.5);

// ---- the parts of one lotwise sample (in-amp) -------------------------------------

struct Parts {
  detail::VariationModel model;
  detail::Plan plan;
  explicit Parts(const Study& s)
      : model(s.design().circuit, s.design().variations, s.design().correlations,
              s.design().temperature),
        plan(detail::make_plan(s.network(), s.design().measurements)) {}
};

// Points and the parameter values: everything before the solve, as a run does it (a
// block of 16 points at once, mapped in one pass: the in-amp's laws are plain).
void BM_inamp_part_sampling(benchmark::State& state) {
  const Study& s = inamp();
  Parts parts(s);
  if (!parts.model.maps_in_one_pass()) {
    state.SkipWithError("the in-amp's variation model should map in one pass");
    return;
  }
  constexpr std::size_t lanes = detail::Evaluator::lanes;
  detail::PointStream points(parts.model, Sampler::monte_carlo, 1024, nullptr);
  std::vector<detail::BuildScratch> builds(lanes, parts.model.make_scratch());
  const std::size_t n = s.nominal_parameters().size();
  const std::vector<double> nominal = s.nominal_parameters();
  std::vector<double> block(lanes * parts.model.dimension()), thetas;
  for (std::size_t l = 0; l < lanes; ++l) thetas.insert(thetas.end(), nominal.begin(), nominal.end());
  const std::uint64_t samples = 1u << 20;
  for (auto _ : state) {
    for (std::uint64_t k = 0; k < samples / 1024; ++k) {
      points.start(7, k, 0, k * 1024, 1024);
      for (std::size_t i = 0; i < 1024; i += lanes) {
        points.next_into(block.data(), lanes);
        parts.model.prepare_values(block.data(), lanes, builds.data(), thetas.data(), n);
      }
      benchmark::DoNotOptimize(thetas.data());
    }
  }
  set_rate(state, samples);
}
BENCHMARK(BM_inamp_part_sampling)
    ->Unit(benchmark::kMillisecond)->MeasureProcessCPUTime()->MinTime(0.5);

// The evaluator alone on pre-drawn parameter vectors (all measurements): one at a time
// (Evaluator::evaluate, lanes 0) or side by side (evaluate_lanes, lanes 1).
void BM_inamp_part_evaluate(benchmark::State& state) {
  const Study& s = inamp();
  Parts parts(s);
  detail::PointStream points(parts.model, Sampler::monte_carlo, 1024, nullptr);
  detail::BuildScratch build = parts.model.make_scratch();
  const std::size_t n = s.nominal_parameters().size();
  std::vector<double> thetas;
  points.start(7, 0, 0, 0, 1024);
  std::vector<double> theta = s.nominal_parameters();
  for (int i = 0; i < 1024; ++i) {
    parts.model.prepare(points.next(), build);
    parts.model.apply(build, parts.model.temperature_of(build, 0), theta.data());
    thetas.insert(thetas.end(), theta.begin(), theta.end());
  }
  detail::Evaluator evaluator(s.network(), parts.plan);
  const std::size_t m = s.design().measurements.size();
  constexpr std::size_t lanes = detail::Evaluator::lanes;
  std::vector<double> values(m * lanes);
  const double* in[lanes];
  double* out[lanes];
  SolveStatus statuses[lanes];
  for (std::size_t l = 0; l < lanes; ++l) out[l] = &values[l * m];
  const bool side_by_side = state.range(0) != 0;
  for (auto _ : state) {
    for (std::size_t i = 0; i < 1024; i += side_by_side ? lanes : 1) {
      if (side_by_side) {
        for (std::size_t l = 0; l < lanes; ++l) in[l] = &thetas[(i + l) * n];
        evaluator.evaluate_lanes(in, out, statuses, lanes);
      } else {
        evaluator.evaluate(&thetas[i * n], values.data());
      }
      benchmark::DoNotOptimize(values.data());
    }
  }
  set_rate(state, 1024);
}
BENCHMARK(BM_inamp_part_evaluate)
    ->ArgNames({"lanes"})->Arg(0)->Arg(1)->MeasureProcessCPUTime()->MinTime(0.5);

// One DC factorisation and the in-amp's three solves, on the reused pattern (1) or the
// dense partial-pivoting LU (0), as before this change.
void BM_inamp_part_factor_solve(benchmark::State& state) {
  const Study& s = inamp();
  Parts parts(s);
  const Network& net = s.network();
  std::vector<double> theta = s.nominal_parameters();
  NetworkWorkspace ws = net.make_workspace(parts.plan.slots);
  if (state.range(0)) net.prepare_dc(theta.data(), ws);
  const auto& excitations = parts.plan.analyses.at(0).excitations;
  for (auto _ : state) {
    theta[0] *= 1.0 + 1e-12;  // a new matrix every time
    net.factor_dc(theta.data(), ws);
    for (std::size_t e = 0; e < excitations.size(); ++e) {
      benchmark::DoNotOptimize(net.solve_dc(theta.data(), excitations[e], ws, e));
    }
  }
  set_rate(state, 1);
  state.counters["unknowns"] = static_cast<double>(net.size());
  if (state.range(0)) {
    state.counters["nonzeros_LU"] = static_cast<double>(ws.data().dc_patterns.at(0).lu.nonzeros());
    state.counters["updates_LU"] = static_cast<double>(ws.data().dc_patterns.at(0).lu.updates());
  }
}
BENCHMARK(BM_inamp_part_factor_solve)
    ->ArgNames({"pattern"})->Arg(0)->Arg(1)->MeasureProcessCPUTime()->MinTime(0.5);

// lotwise and the closed form see the same draws: their means must agree to rounding
// and the pass counts nearly exactly (a value on a spec limit may round either way).
bool references_agree() {
  RunOptions o;
  o.samples = 1u << 16;
  o.seed = 7;
  o.threads = 1;
  o.attribution = false;
  const YieldResult r = inamp().run(o);
  const bench::ClosedFormResult c =
      bench::ClosedFormInAmp(inamp().coordinate_names()).run(o.samples, o.seed);
  const double gain = r.measurements.at(0).stats.mean();
  const double cmrr = r.measurements.at(1).stats.mean();
  const double offset = r.measurements.at(2).stats.mean();
  const bool ok = std::abs(gain - c.gain.mean) <= 1e-9 * std::abs(c.gain.mean) &&
                  std::abs(cmrr - c.cmrr.mean) <= 1e-6 * std::abs(c.cmrr.mean) &&
                  std::abs(offset - c.offset.mean) <= 1e-9 + 1e-6 * std::abs(c.offset.mean) &&
                  (r.passed > c.passed ? r.passed - c.passed : c.passed - r.passed) <= 2;
  std::fprintf(stderr,
               "check: lotwise / closed form on the same %llu draws: gain %.9g / %.9g, "
               "CMRR %.6g / %.6g dB, offset %.6g / %.6g V, passed %llu / %llu: %s\n",
               static_cast<unsigned long long>(o.samples), gain, c.gain.mean, cmrr, c.cmrr.mean,
               offset, c.offset.mean, static_cast<unsigned long long>(r.passed),
               static_cast<unsigned long long>(c.passed), ok ? "agree" : "DISAGREE");
  return ok;
}

}  // namespace

int main(int argc, char** argv) {
  if (!references_agree()) return 1;
  benchmark::Initialize(&argc, argv);
  if (benchmark::ReportUnrecognizedArguments(argc, argv)) return 1;
  benchmark::RunSpecifiedBenchmarks();
  benchmark::Shutdown();
  return 0;
}
