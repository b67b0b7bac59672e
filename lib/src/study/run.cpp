// The sampling loop: fixed-size chunks, each with its own points (a random stream, or a
// stretch of a scrambled Sobol sequence), evaluated on worker threads and merged strictly
// in chunk order so the answer is the same on any number of threads. The samples are
// split into replicates, each a fresh randomisation, whose spread gives standard errors.
#include <algorithm>
#include <cmath>
#include <exception>
#include <limits>
#include <map>
#include <memory>
#include <mutex>
#include <string>
#include <thread>
#include <utility>

#include <boost/math/distributions/students_t.hpp>

#include "lotwise/error.hpp"
#include "stats/association.hpp"
#include "study/study_impl.hpp"
#include "variation/points.hpp"

namespace lotwise {
namespace {

// Counts and moments of a set of evaluations: of whole builds, of the builds at one
// temperature of a sweep, or of one replicate.
struct Tally {
  std::uint64_t samples = 0;
  std::uint64_t passed = 0;
  std::uint64_t singular = 0;
  std::uint64_t invalid = 0;
  std::uint64_t saturated = 0;
  std::vector<std::uint64_t> spec_passed;
  std::vector<std::uint64_t> spec_saturated;         ///< failures on withheld values
  std::vector<std::uint64_t> measurement_saturated;  ///< values withheld for saturation
  std::vector<RunningStats> stats;

  Tally(std::size_t measurements, std::size_t specs)
      : spec_passed(specs, 0),
        spec_saturated(specs, 0),
        measurement_saturated(measurements, 0),
        stats(measurements) {}

  void merge(const Tally& o) {
    samples += o.samples;
    passed += o.passed;
    singular += o.singular;
    invalid += o.invalid;
    saturated += o.saturated;
    for (std::size_t i = 0; i < spec_passed.size(); ++i) spec_passed[i] += o.spec_passed[i];
    for (std::size_t i = 0; i < spec_saturated.size(); ++i) spec_saturated[i] += o.spec_saturated[i];
    for (std::size_t i = 0; i < measurement_saturated.size(); ++i) {
      measurement_saturated[i] += o.measurement_saturated[i];
    }
    for (std::size_t i = 0; i < stats.size(); ++i) stats[i].merge(o.stats[i]);
  }
};

struct ChunkTally {
  std::uint64_t replicate = 0;
  Tally builds;
  std::vector<Tally> temperatures;  ///< one per operating temperature of a sweep

  ChunkTally(std::size_t measurements, std::size_t specs, std::size_t sweep)
      : builds(measurements, specs), temperatures(sweep, Tally(measurements, specs)) {}

  // Each measurement's histogram once the ranges are set; before that (the first chunk)
  // the raw values, one row of measurements per evaluation, to set the ranges from.
  std::vector<Histogram> histograms;
  std::vector<double> pilot;
  // Attribution: (measurement, parameter) co-moments, and each varied parameter's
  // values over all evaluations and over the failing ones.
  std::vector<detail::PairMoments> pairs;
  std::vector<RunningStats> parameter_all;
  std::vector<RunningStats> parameter_failing;
};

// The histogram range of one measurement from the first chunk's values: twice their span
// about its centre, so the tails of a much longer run still fall inside.
Histogram histogram_from_pilot(const std::vector<double>& pilot, std::size_t m,
                               std::size_t m_count, std::uint32_t bins) {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -lo;
  for (std::size_t i = m; i < pilot.size(); i += m_count) {
    if (!std::isfinite(pilot[i])) continue;
    lo = std::min(lo, pilot[i]);
    hi = std::max(hi, pilot[i]);
  }
  if (!(lo <= hi)) lo = hi = 0.0;
  const double centre = 0.5 * (lo + hi);
  double half = hi - lo;  // twice the half-span
  if (!(half > 1e-9 * std::max(1.0, std::fabs(centre)))) half = 1e-9 * std::max(1.0, std::fabs(centre));
  Histogram h(centre - half, centre + half, bins);
  for (std::size_t i = m; i < pilot.size(); i += m_count) h.add(pilot[i]);
  return h;
}

// Where the chunks lie: replicate r holds `base` points, plus one for the first `extra`
// replicates; its chunks cover points [j C, (j + 1) C) of its own sequence, and the
// replicates follow one another in the sample numbering.
struct ChunkLayout {
  std::uint64_t chunk = 1, base = 0, extra = 0, replicates = 1;
  std::uint64_t chunks_long = 0, chunks_short = 0;  ///< chunks of a replicate of base+1 / base

  struct Range {
    std::uint64_t replicate, begin, count, first_sample;
  };

  ChunkLayout(std::uint64_t samples, std::uint64_t replicate_count, std::uint64_t chunk_size)
      : chunk(chunk_size),
        base(samples / replicate_count),
        extra(samples % replicate_count),
        replicates(replicate_count),
        chunks_long((base + 1 + chunk_size - 1) / chunk_size),
        chunks_short((base + chunk_size - 1) / chunk_size) {}

  std::uint64_t chunks() const { return extra * chunks_long + (replicates - extra) * chunks_short; }

  Range range(std::uint64_t k) const {
    std::uint64_t r, j, size;
    if (k < extra * chunks_long) {
      r = k / chunks_long;
      j = k % chunks_long;
      size = base + 1;
    } else {
      const std::uint64_t rest = k - extra * chunks_long;
      r = extra + rest / chunks_short;
      j = rest % chunks_short;
      size = base;
    }
    const std::uint64_t begin = j * chunk;
    return Range{r, begin, std::min(chunk, size - begin), r * base + std::min(r, extra) + begin};
  }
};

std::uint32_t replicates_of(const RunOptions& o) {
  if (o.replicates > 0) return o.replicates;
  if (o.sampler == Sampler::monte_carlo) return 1;
  return static_cast<std::uint32_t>(std::min<std::uint64_t>(16, o.samples));
}

void check_options(const RunOptions& o) {
  if (o.samples == 0) throw RunError("the number of samples must be at least 1");
  if (o.chunk_size == 0) throw RunError("the chunk size must be at least 1");
  if (!(o.confidence > 0.0 && o.confidence < 1.0)) {
    throw RunError("the confidence level must lie strictly between 0 and 1");
  }
  constexpr std::uint64_t cap = std::numeric_limits<std::uint64_t>::max() / 2;
  if (o.samples > cap) throw RunError("the number of samples is too large");
  if (o.sampler != Sampler::monte_carlo && o.sampler != Sampler::sobol &&
      o.sampler != Sampler::latin_hypercube) {
    throw RunError("unknown sampler");
  }
  if (o.replicates > o.samples) {
    throw RunError("there are more replicates (" + std::to_string(o.replicates) +
                   ") than samples (" + std::to_string(o.samples) + ")");
  }
  if (o.replicates > 65536) throw RunError("at most 65536 replicates");
  if (!(o.target_half_width >= 0.0 && o.target_half_width < 0.5)) {
    throw RunError("the target half-width must lie in [0, 0.5)");
  }
  if (o.target_half_width > 0.0 && replicates_of(o) > 1) {
    throw RunError("an adaptive run (target half-width) needs a single replicate");
  }
}

// s_R / sqrt(R) over the replicates with a finite value; NaN below two.
template <typename Value>
std::pair<double, std::uint64_t> replicate_error(const std::vector<Tally>& replicates,
                                                 Value value) {
  RunningStats spread;
  for (const Tally& t : replicates) {
    if (t.samples == 0) continue;
    const double v = value(t);
    if (std::isfinite(v)) spread.add(v);
  }
  if (spread.count() < 2) return {std::numeric_limits<double>::quiet_NaN(), spread.count()};
  return {spread.std_dev() / std::sqrt(static_cast<double>(spread.count())), spread.count()};
}

}  // namespace

YieldResult run_study(const Study::Impl& s, const RunOptions& o) {
  check_options(o);
  const std::size_t m_count = s.design.measurements.size();
  const std::size_t spec_count = s.design.specs.size();
  const std::uint32_t replicate_count = replicates_of(o);
  const ChunkLayout layout(o.samples, replicate_count, o.chunk_size);
  const std::uint64_t chunks = layout.chunks();
  // Every build is evaluated at each operating temperature of a sweep.
  const std::size_t evaluations = s.model.evaluations();
  const std::size_t sweep = s.design.temperature.operating.size();
  std::unique_ptr<detail::SobolDirections> directions;
  if (o.sampler == Sampler::sobol) {
    directions = std::make_unique<detail::SobolDirections>(s.model.dimension());
  }
  unsigned threads = o.threads ? o.threads : std::max(1u, std::thread::hardware_concurrency());
  if (threads > chunks) threads = static_cast<unsigned>(chunks);

  YieldResult r;
  r.requested = o.samples;
  r.seed = o.seed;
  r.chunk_size = o.chunk_size;
  r.confidence = o.confidence;
  r.sampler = o.sampler;
  r.replicates = replicate_count;
  if (o.keep_samples) {
    r.values.assign(static_cast<std::size_t>(o.samples * evaluations * m_count),
                    std::numeric_limits<double>::quiet_NaN());
    r.pass.assign(static_cast<std::size_t>(o.samples), 0);
  }

  std::atomic<std::uint64_t> next{0};
  std::atomic<bool> failed{false};
  std::mutex mutex;
  std::map<std::uint64_t, ChunkTally> pending;
  std::uint64_t merged = 0;
  Tally total(m_count, spec_count);
  std::vector<Tally> at_temperature(sweep, Tally(m_count, spec_count));
  std::vector<Tally> per_replicate(replicate_count, Tally(m_count, spec_count));
  std::exception_ptr error;
  // Histograms: the first chunk runs alone and its values set each range; `ranges` holds
  // the empty histograms every later chunk starts from.
  const bool histograms = o.histogram_bins > 0;
  std::vector<Histogram> ranges;
  std::vector<Histogram> total_histograms;
  std::vector<double> pilot_values;
  std::uint64_t limit = histograms ? 1 : chunks;
  std::atomic<bool> target_met{false};
  // The varied parameters, for the correlations and failure attribution.
  std::vector<std::size_t> attributed;
  if (o.attribution) {
    for (const auto& e : s.model.entries()) {
      if (e.varies) attributed.push_back(e.parameter);
    }
  }
  const std::size_t a_count = attributed.size();
  std::vector<detail::PairMoments> total_pairs(m_count * a_count);
  std::vector<RunningStats> total_parameter_all(a_count), total_parameter_failing(a_count);

  auto worker = [&]() {
    try {
      detail::Evaluator evaluator(s.network, s.plan);
      detail::PointStream points(s.model, o.sampler, o.chunk_size, directions.get());
      detail::BuildScratch build = s.model.make_scratch();
      std::vector<double> theta = s.nominal_parameters;
      std::vector<double> values(m_count);
      std::vector<std::uint8_t> spec_ok(spec_count);
      std::vector<std::uint8_t> spec_saturated(spec_count);
      for (;;) {
        if (failed.load() || (o.stop && o.stop->load())) return;
        const std::uint64_t k = next.fetch_add(1);
        if (k >= limit || target_met.load()) return;
        const ChunkLayout::Range range = layout.range(k);
        ChunkTally tally(m_count, spec_count, sweep);
        tally.histograms = ranges;
        tally.pairs.resize(m_count * a_count);
        tally.parameter_all.resize(a_count);
        tally.parameter_failing.resize(a_count);
        const bool pilot = histograms && ranges.empty();
        if (pilot) tally.pilot.reserve(static_cast<std::size_t>(range.count) * evaluations * m_count);
        tally.replicate = range.replicate;
        points.start(o.seed, k, range.replicate, range.begin, static_cast<std::size_t>(range.count));
        for (std::uint64_t t = 0; t < range.count; ++t) {
          const std::uint64_t i = range.first_sample + t;
          s.model.prepare(points.next(), build);
          std::fill(spec_ok.begin(), spec_ok.end(), std::uint8_t{1});
          std::fill(spec_saturated.begin(), spec_saturated.end(), std::uint8_t{0});
          bool saturated = false;  // at some evaluation of this build
          bool pass = true;
          SolveStatus failure = SolveStatus::ok;  // the build's first unevaluated state
          for (std::size_t q = 0; q < evaluations; ++q) {
            s.model.apply(build, s.model.temperature_of(build, q), theta.data());
            const SolveStatus status = evaluator.evaluate(theta.data(), values.data());
            Tally* here = sweep ? &tally.temperatures[q] : nullptr;
            bool ok_here = status == SolveStatus::ok;
            if (status == SolveStatus::ok) {
              // Values withheld because an op-amp saturated stay out of the statistics;
              // their specs fail, counted as failures for saturation.
              const std::vector<unsigned char>& withheld = evaluator.saturated();
              if (evaluator.any_saturated()) {
                saturated = true;
                if (here) ++here->saturated;
              }
              for (std::size_t m = 0; m < m_count; ++m) {
                if (withheld[m]) {
                  ++tally.builds.measurement_saturated[m];
                  if (here) ++here->measurement_saturated[m];
                  if (pilot) tally.pilot.push_back(values[m]);
                  continue;
                }
                tally.builds.stats[m].add(values[m]);
                if (here) here->stats[m].add(values[m]);
                if (!tally.histograms.empty()) tally.histograms[m].add(values[m]);
                if (pilot) tally.pilot.push_back(values[m]);
                if (std::isfinite(values[m])) {
                  for (std::size_t a = 0; a < a_count; ++a) {
                    tally.pairs[m * a_count + a].add(theta[attributed[a]], values[m]);
                  }
                }
              }
              for (std::size_t j = 0; j < spec_count; ++j) {
                const bool ok = s.design.specs[j].passes(values[s.spec_measurement[j]]);
                spec_ok[j] = spec_ok[j] && ok;
                if (withheld[s.spec_measurement[j]]) {
                  spec_saturated[j] = 1;
                  if (here) ++here->spec_saturated[j];
                }
                if (here) here->spec_passed[j] += ok;
                ok_here = ok_here && ok;
              }
            } else {
              std::fill(spec_ok.begin(), spec_ok.end(), std::uint8_t{0});
              if (failure == SolveStatus::ok) failure = status;
              if (here) ++(status == SolveStatus::singular ? here->singular : here->invalid);
            }
            if (here) {
              ++here->samples;
              here->passed += ok_here;
            }
            pass = pass && ok_here;
            for (std::size_t a = 0; a < a_count; ++a) {
              tally.parameter_all[a].add(theta[attributed[a]]);
              if (!ok_here) tally.parameter_failing[a].add(theta[attributed[a]]);
            }
            if (o.keep_samples) {
              std::copy(values.begin(), values.end(),
                        r.values.begin() + static_cast<std::ptrdiff_t>((i * evaluations + q) * m_count));
            }
          }
          ++tally.builds.samples;
          for (std::size_t j = 0; j < spec_count; ++j) tally.builds.spec_passed[j] += spec_ok[j];
          if (failure == SolveStatus::singular) {
            ++tally.builds.singular;
          } else if (failure != SolveStatus::ok) {
            ++tally.builds.invalid;
          } else if (saturated) {
            ++tally.builds.saturated;
            for (std::size_t j = 0; j < spec_count; ++j) {
              tally.builds.spec_saturated[j] += spec_saturated[j] && !spec_ok[j];
            }
          }
          tally.builds.passed += pass;
          if (o.keep_samples) r.pass[static_cast<std::size_t>(i)] = pass;
        }
        std::lock_guard<std::mutex> lock(mutex);
        pending.emplace(k, std::move(tally));
        while (!pending.empty() && pending.begin()->first == merged && !target_met.load()) {
          ChunkTally& done = pending.begin()->second;
          total.merge(done.builds);
          for (std::size_t m = 0; m < done.histograms.size(); ++m) {
            total_histograms[m].merge(done.histograms[m]);
          }
          if (!done.pilot.empty()) pilot_values = std::move(done.pilot);
          for (std::size_t i = 0; i < total_pairs.size(); ++i) total_pairs[i].merge(done.pairs[i]);
          for (std::size_t a = 0; a < a_count; ++a) {
            total_parameter_all[a].merge(done.parameter_all[a]);
            total_parameter_failing[a].merge(done.parameter_failing[a]);
          }
          for (std::size_t q = 0; q < sweep; ++q) at_temperature[q].merge(done.temperatures[q]);
          per_replicate[static_cast<std::size_t>(done.replicate)].merge(done.builds);
          pending.erase(pending.begin());
          ++merged;
          if (o.progress) o.progress(total.samples, o.samples);
          // Adaptive stop, decided on the merged prefix alone.
          if (o.target_half_width > 0.0 && merged < chunks) {
            const Interval ci = clopper_pearson(total.passed, total.samples, o.confidence);
            if (0.5 * (ci.high - ci.low) <= o.target_half_width) target_met.store(true);
          }
        }
      }
    } catch (...) {
      std::lock_guard<std::mutex> lock(mutex);
      if (!error) error = std::current_exception();
      failed.store(true);
    }
  };

  if (histograms) {
    worker();  // the first chunk alone
    if (!error && merged == 1) {
      for (std::size_t m = 0; m < m_count; ++m) {
        total_histograms.push_back(histogram_from_pilot(pilot_values, m, m_count, o.histogram_bins));
        ranges.push_back(Histogram(total_histograms.back().low(), total_histograms.back().high(),
                                   o.histogram_bins));
      }
    }
    limit = ranges.empty() && m_count > 0 ? 0 : chunks;
    next.store(1);
  }
  if (error) {
    // reported below
  } else if (threads <= 1) {
    worker();
  } else {
    std::vector<std::thread> pool;
    for (unsigned t = 0; t < threads; ++t) pool.emplace_back(worker);
    for (auto& t : pool) t.join();
  }
  if (error) std::rethrow_exception(error);

  const double nan = std::numeric_limits<double>::quiet_NaN();
  auto fraction = [&](std::uint64_t k, std::uint64_t n) {
    return n > 0 ? static_cast<double>(k) / static_cast<double>(n) : nan;
  };
  auto spec_summaries = [&](const Tally& t) {
    std::vector<SpecSummary> out;
    for (std::size_t j = 0; j < spec_count; ++j) {
      SpecSummary spec;
      spec.spec = s.design.specs[j];
      spec.passed = t.spec_passed[j];
      spec.saturated = t.spec_saturated[j];
      spec.fraction = fraction(spec.passed, t.samples);
      if (t.samples > 0) {
        spec.interval = clopper_pearson(spec.passed, t.samples, o.confidence);
        spec.wilson_interval = wilson(spec.passed, t.samples, o.confidence);
        spec.jeffreys_interval = jeffreys(spec.passed, t.samples, o.confidence);
      }
      const RunningStats& values = t.stats[s.spec_measurement[j]];
      spec.capability = capability(spec.spec.min, spec.spec.max, values.mean(), values.std_dev(),
                                   values.count(), o.confidence);
      spec.normal_fit = normal_fit_yield(spec.spec.min, spec.spec.max, values.mean(), values.std_dev());
      out.push_back(spec);
    }
    return out;
  };
  auto measurement_summaries = [&](const Tally& t) {
    std::vector<MeasurementSummary> out;
    for (std::size_t m = 0; m < m_count; ++m) {
      MeasurementSummary summary;
      summary.name = s.design.measurements[m].name;
      summary.kind = s.design.measurements[m].kind;
      summary.nominal = s.nominal_values[m];
      summary.stats = t.stats[m];
      summary.saturated = t.measurement_saturated[m];
      out.push_back(summary);
    }
    return out;
  };

  r.samples = total.samples;
  r.target_met = target_met.load();
  r.complete = merged == chunks || r.target_met;
  if (o.keep_samples) {
    // A stopped run keeps the merged chunks: the first ones, as samples are numbered in
    // chunk order.
    r.values.resize(static_cast<std::size_t>(r.samples * evaluations * m_count));
    r.pass.resize(static_cast<std::size_t>(r.samples));
  }
  r.passed = total.passed;
  r.singular = total.singular;
  r.invalid_values = total.invalid;
  r.saturated = total.saturated;
  const bool any = r.samples > 0;
  r.yield = fraction(r.passed, r.samples);
  if (any) {
    r.interval = clopper_pearson(r.passed, r.samples, o.confidence);
    r.wilson_interval = wilson(r.passed, r.samples, o.confidence);
    r.jeffreys_interval = jeffreys(r.passed, r.samples, o.confidence);
    r.failure_upper_bound = clopper_pearson_upper(r.samples - r.passed, r.samples, o.confidence);
  }
  r.specs = spec_summaries(total);
  r.measurements = measurement_summaries(total);
  for (std::size_t a = 0; a < a_count; ++a) {
    r.attribution_parameters.push_back(s.design.circuit.parameters()[attributed[a]].name);
    const RunningStats& all = total_parameter_all[a];
    const RunningStats& failing = total_parameter_failing[a];
    r.failure_shift.push_back(failing.count() > 0 && all.std_dev() > 0.0
                                  ? (failing.mean() - all.mean()) / all.std_dev()
                                  : nan);
    if (failing.count() > 0 && all.std_dev() > 0.0) {
      // RMS about the overall mean: the failing builds' own variance (n, not n - 1) plus
      // the square of their shift.
      const double n_f = static_cast<double>(failing.count());
      const double var_f = failing.count() > 1 ? failing.std_dev() * failing.std_dev() * (n_f - 1.0) / n_f : 0.0;
      const double shift = failing.mean() - all.mean();
      r.failure_spread.push_back(std::sqrt(var_f + shift * shift) / all.std_dev());
    } else {
      r.failure_spread.push_back(nan);
    }
  }
  for (const auto& p : total_pairs) r.correlations.push_back(p.correlation());
  for (std::size_t m = 0; m < total_histograms.size(); ++m) {
    r.measurements[m].coverage = total_histograms[m].coverage_interval(o.confidence);
    r.measurements[m].histogram = std::move(total_histograms[m]);
  }

  // Replicate standard errors (L'Ecuyer & Lemieux 2002): each replicate is an unbiased
  // estimate; their spread measures the error of the pooled one.
  const auto yield_error = replicate_error(per_replicate, [](const Tally& t) {
    return static_cast<double>(t.passed) / static_cast<double>(t.samples);
  });
  r.yield_standard_error = yield_error.first;
  if (std::isfinite(yield_error.first)) {
    const boost::math::students_t_distribution<double> law(static_cast<double>(yield_error.second - 1));
    const double half = boost::math::quantile(law, 0.5 + 0.5 * o.confidence) * yield_error.first;
    r.replicate_interval = Interval{std::max(0.0, r.yield - half), std::min(1.0, r.yield + half)};
  }
  for (std::size_t j = 0; j < spec_count; ++j) {
    r.specs[j].standard_error = replicate_error(per_replicate, [j](const Tally& t) {
      return static_cast<double>(t.spec_passed[j]) / static_cast<double>(t.samples);
    }).first;
  }
  for (std::size_t m = 0; m < m_count; ++m) {
    r.measurements[m].mean_standard_error = replicate_error(per_replicate, [m](const Tally& t) {
      return t.stats[m].count() > 0 ? t.stats[m].mean() : std::numeric_limits<double>::quiet_NaN();
    }).first;
  }

  for (std::size_t q = 0; q < sweep; ++q) {
    const Tally& t = at_temperature[q];
    TemperatureResult at;
    at.temperature = s.design.temperature.operating[q];
    at.passed = t.passed;
    at.yield = fraction(t.passed, t.samples);
    if (t.samples > 0) at.interval = clopper_pearson(t.passed, t.samples, o.confidence);
    at.singular = t.singular;
    at.invalid_values = t.invalid;
    at.saturated = t.saturated;
    at.specs = spec_summaries(t);
    at.measurements = measurement_summaries(t);
    r.temperatures.push_back(std::move(at));
  }
  return r;
}

}  // namespace lotwise
