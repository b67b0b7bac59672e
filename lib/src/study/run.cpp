// The Monte Carlo loop: fixed-size chunks, each with its own random stream, evaluated on
// worker threads and merged strictly in chunk order so the answer is the same on any
// number of threads.
#include <algorithm>
#include <cmath>
#include <exception>
#include <limits>
#include <map>
#include <mutex>
#include <thread>

#include "lotwise/error.hpp"
#include "study/study_impl.hpp"

namespace lotwise {
namespace {

struct ChunkTally {
  std::uint64_t samples = 0;
  std::uint64_t passed = 0;
  std::uint64_t singular = 0;
  std::uint64_t invalid = 0;
  std::vector<std::uint64_t> spec_passed;
  std::vector<RunningStats> stats;

  ChunkTally(std::size_t measurements, std::size_t specs)
      : spec_passed(specs, 0), stats(measurements) {}

  void merge(const ChunkTally& o) {
    samples += o.samples;
    passed += o.passed;
    singular += o.singular;
    invalid += o.invalid;
    for (std::size_t i = 0; i < spec_passed.size(); ++i) spec_passed[i] += o.spec_passed[i];
    for (std::size_t i = 0; i < stats.size(); ++i) stats[i].merge(o.stats[i]);
  }
};

void check_options(const RunOptions& o) {
  if (o.samples == 0) throw RunError("the number of samples must be at least 1");
  if (o.chunk_size == 0) throw RunError("the chunk size must be at least 1");
  if (!(o.confidence > 0.0 && o.confidence < 1.0)) {
    throw RunError("the confidence level must lie strictly between 0 and 1");
  }
  constexpr std::uint64_t cap = std::numeric_limits<std::uint64_t>::max() / 2;
  if (o.samples > cap) throw RunError("the number of samples is too large");
}

}  // namespace

YieldResult run_study(const Study::Impl& s, const RunOptions& o) {
  check_options(o);
  const std::size_t m_count = s.design.measurements.size();
  const std::size_t spec_count = s.design.specs.size();
  const std::uint64_t chunk = o.chunk_size;
  const std::uint64_t chunks = (o.samples + chunk - 1) / chunk;
  unsigned threads = o.threads ? o.threads : std::max(1u, std::thread::hardware_concurrency());
  if (threads > chunks) threads = static_cast<unsigned>(chunks);

  YieldResult r;
  r.requested = o.samples;
  r.seed = o.seed;
  r.chunk_size = o.chunk_size;
  r.confidence = o.confidence;
  if (o.keep_samples) {
    r.values.assign(static_cast<std::size_t>(o.samples * m_count),
                    std::numeric_limits<double>::quiet_NaN());
    r.pass.assign(static_cast<std::size_t>(o.samples), 0);
  }

  std::atomic<std::uint64_t> next{0};
  std::atomic<bool> failed{false};
  std::mutex mutex;
  std::map<std::uint64_t, ChunkTally> pending;
  std::uint64_t merged = 0;
  ChunkTally total(m_count, spec_count);
  std::exception_ptr error;

  auto worker = [&]() {
    try {
      detail::Evaluator evaluator(s.network, s.plan);
      std::vector<double> theta = s.nominal_parameters;
      std::vector<double> values(m_count);
      for (;;) {
        if (failed.load() || (o.stop && o.stop->load())) return;
        const std::uint64_t k = next.fetch_add(1);
        if (k >= chunks) return;
        ChunkTally tally(m_count, spec_count);
        detail::Engine engine(detail::chunk_seed(o.seed, k));
        const std::uint64_t end = std::min(o.samples, (k + 1) * chunk);
        for (std::uint64_t i = k * chunk; i < end; ++i) {
          s.sampler.draw(engine, s.nominal_parameters.data(), theta.data());
          const SolveStatus status = evaluator.evaluate(theta.data(), values.data());
          ++tally.samples;
          bool pass = status == SolveStatus::ok;
          if (status == SolveStatus::ok) {
            for (std::size_t m = 0; m < m_count; ++m) tally.stats[m].add(values[m]);
            for (std::size_t j = 0; j < spec_count; ++j) {
              const bool ok = s.design.specs[j].passes(values[s.spec_measurement[j]]);
              tally.spec_passed[j] += ok;
              pass = pass && ok;
            }
          } else if (status == SolveStatus::singular) {
            ++tally.singular;
          } else {
            ++tally.invalid;
          }
          tally.passed += pass;
          if (o.keep_samples) {
            std::copy(values.begin(), values.end(), r.values.begin() + static_cast<std::ptrdiff_t>(i * m_count));
            r.pass[static_cast<std::size_t>(i)] = pass;
          }
        }
        std::lock_guard<std::mutex> lock(mutex);
        pending.emplace(k, std::move(tally));
        while (!pending.empty() && pending.begin()->first == merged) {
          total.merge(pending.begin()->second);
          pending.erase(pending.begin());
          ++merged;
          if (o.progress) o.progress(total.samples, o.samples);
        }
      }
    } catch (...) {
      std::lock_guard<std::mutex> lock(mutex);
      if (!error) error = std::current_exception();
      failed.store(true);
    }
  };

  if (threads <= 1) {
    worker();
  } else {
    std::vector<std::thread> pool;
    for (unsigned t = 0; t < threads; ++t) pool.emplace_back(worker);
    for (auto& t : pool) t.join();
  }
  if (error) std::rethrow_exception(error);

  r.samples = total.samples;
  r.complete = merged == chunks;
  if (o.keep_samples) {
    r.values.resize(static_cast<std::size_t>(r.samples * m_count));
    r.pass.resize(static_cast<std::size_t>(r.samples));
  }
  r.passed = total.passed;
  r.singular = total.singular;
  r.invalid_values = total.invalid;
  const bool any = r.samples > 0;
  r.yield = any ? static_cast<double>(r.passed) / static_cast<double>(r.samples)
                : std::numeric_limits<double>::quiet_NaN();
  if (any) r.interval = clopper_pearson(r.passed, r.samples, o.confidence);
  for (std::size_t j = 0; j < spec_count; ++j) {
    SpecSummary spec;
    spec.spec = s.design.specs[j];
    spec.passed = total.spec_passed[j];
    spec.fraction = any ? static_cast<double>(spec.passed) / static_cast<double>(r.samples)
                        : std::numeric_limits<double>::quiet_NaN();
    if (any) spec.interval = clopper_pearson(spec.passed, r.samples, o.confidence);
    r.specs.push_back(spec);
  }
  for (std::size_t m = 0; m < m_count; ++m) {
    MeasurementSummary summary;
    summary.name = s.design.measurements[m].name;
    summary.kind = s.design.measurements[m].kind;
    summary.nominal = s.nominal_values[m];
    summary.stats = total.stats[m];
    r.measurements.push_back(summary);
  }
  return r;
}

}  // namespace lotwise
