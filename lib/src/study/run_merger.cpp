#include "study/run_merger.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iterator>
#include <limits>
#include <new>
#include <stdexcept>
#include <string>
#include <utility>

#include <boost/math/distributions/students_t.hpp>

#include "lotwise/error.hpp"
#include "stats/regression.hpp"

namespace lotwise::detail {
namespace {

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

// Trials per batch of the numerical-tolerance procedure: M = max(J, 10^4) with J the
// smallest integer >= 100 / (1 - p) (JCGM 101:2008, 7.9.4 b).
std::uint64_t tolerance_batch_trials(double coverage) {
  const double j = std::ceil(100.0 / (1.0 - coverage) - 1e-9);
  return std::max<std::uint64_t>(10000, static_cast<std::uint64_t>(j));
}

// A chunk's entered values (none for the first chunk) into histograms of the run's ranges.
void add_histogram_values(std::vector<Histogram>& histograms, const ChunkTally& done) {
  for (std::size_t m = 0; m < done.histogram_values.size(); ++m) {
    const std::vector<double>& v = done.histogram_values[m];
    histograms[m].add(v.data(), v.size(), 1);
  }
}

}  // namespace

// The numerical tolerance of a standard uncertainty u written with `digits` significant
// digits: u = c 10^l with c a `digits`-digit integer, delta = 10^l / 2 (JCGM 101:2008, 7.9.2).
double numerical_tolerance(double u, unsigned digits) {
  if (!(u > 0.0) || !std::isfinite(u) || digits == 0) return std::numeric_limits<double>::quiet_NaN();
  const int l = static_cast<int>(std::floor(std::log10(u))) - static_cast<int>(digits) + 1;
  return 0.5 * std::pow(10.0, l);
}

RunMerger::RunMerger(const Study::Impl& study, const RunOptions& options, const RunShape& shape)
    : study_(study),
      options_(options),
      shape_(shape),
      total_(shape.measurements, shape.specs),
      at_temperature_(shape.sweep, Tally(shape.measurements, shape.specs)),
      per_replicate_(shape.replicates, Tally(shape.measurements, shape.specs)),
      batch_(shape.measurements, shape.specs),
      batch_figures_(shape.measurements),
      tolerance_(shape.measurements, std::numeric_limits<double>::quiet_NaN()),
      within_ss_(shape.measurements, 0.0),
      within_dof_(shape.measurements, 0) {
  const std::size_t a_count = shape.attribution ? shape.varied.size() : 0;
  pairs_.resize(shape.measurements * a_count);
  parameter_all_.resize(a_count);
  parameter_failing_.resize(a_count);
  if (options.tolerance_digits > 0) {
    const std::uint64_t trials = tolerance_batch_trials(options.confidence);
    batch_chunks_ = (trials + options.chunk_size - 1) / options.chunk_size;
  }
  if (options.keep_samples) {
    // Every row is kept: say how much that needs rather than fail deep in the run.
    const double rows = static_cast<double>(options.samples) * static_cast<double>(shape.evaluations);
    const double bytes = rows * 8.0 * static_cast<double>(shape.measurements + shape.varied.size()) +
                         static_cast<double>(options.samples);
    try {
      if (bytes > 0.5 * static_cast<double>(std::numeric_limits<std::size_t>::max())) throw std::bad_alloc();
      const auto n = static_cast<std::size_t>(rows);
      values_.reserve(n * shape.measurements);
      parameters_.reserve(n * shape.varied.size());
      pass_.reserve(static_cast<std::size_t>(options.samples));
    } catch (const std::exception&) {  // bad_alloc, or length_error beyond max_size
      char need[32];
      std::snprintf(need, sizeof need, "%.3g", bytes / 1e9);
      throw RunError("keeping every sample of " + std::to_string(options.samples) +
                     " builds needs about " + need +
                     " GB of memory, more than is available: run without keeping samples, or "
                     "with fewer samples");
    }
  }
}

std::uint64_t RunMerger::add(ChunkTally&& chunk) {
  if (chunk.index >= shape_.chunks) {
    throw RunError("chunk " + std::to_string(chunk.index) + " is outside the run's " +
                   std::to_string(shape_.chunks) + " chunks");
  }
  if (chunk.index < merged_ || pending_.count(chunk.index) > 0) {
    throw RunError("chunk " + std::to_string(chunk.index) + " was added twice");
  }
  if (finished()) return 0;
  pending_.emplace(chunk.index, std::move(chunk));
  std::uint64_t done = 0;
  while (!pending_.empty() && pending_.begin()->first == merged_ && !finished()) {
    merge(pending_.begin()->second);
    pending_.erase(pending_.begin());
    ++done;
  }
  if (finished()) pending_.clear();
  return done;
}

void RunMerger::merge(ChunkTally& done) {
  const std::size_t m_count = shape_.measurements;
  if (shape_.histograms && merged_ == 0) {
    // The first chunk sets each histogram's range from its own values.
    for (std::size_t m = 0; m < m_count; ++m) {
      histograms_.push_back(histogram_from_pilot(done.pilot, m, m_count, options_.histogram_bins));
      ranges_.push_back(Histogram(histograms_.back().low(), histograms_.back().high(),
                                  options_.histogram_bins));
    }
  } else {
    add_histogram_values(histograms_, done);
  }
  total_.merge(done.builds);
  for (std::size_t i = 0; i < pairs_.size(); ++i) pairs_[i].merge(done.pairs[i]);
  for (std::size_t a = 0; a < parameter_all_.size(); ++a) {
    parameter_all_[a].merge(done.parameter_all[a]);
    parameter_failing_[a].merge(done.parameter_failing[a]);
  }
  for (std::size_t q = 0; q < shape_.sweep; ++q) at_temperature_[q].merge(done.temperatures[q]);
  per_replicate_[static_cast<std::size_t>(done.replicate)].merge(done.builds);
  if (options_.keep_samples) {
    values_.insert(values_.end(), done.values.begin(), done.values.end());
    parameters_.insert(parameters_.end(), done.parameters.begin(), done.parameters.end());
    pass_.insert(pass_.end(), done.pass.begin(), done.pass.end());
  }
  regression_rows_.insert(regression_rows_.end(), done.regression_rows.begin(),
                          done.regression_rows.end());
  if (batch_chunks_ > 0) update_tolerance_batches(done);
  for (LotStats& lot : done.lots) {
    if (!open_lot_.stats.empty() && lot.lot == open_lot_.lot) {
      for (std::size_t m = 0; m < m_count; ++m) open_lot_.stats[m].merge(lot.stats[m]);
      continue;
    }
    if (!open_lot_.stats.empty()) close_lot(open_lot_, within_ss_, within_dof_);
    open_lot_ = std::move(lot);
  }
  ++merged_;
  if (options_.progress) options_.progress(total_.samples, options_.samples);

  // Adaptive stop, decided on the merged prefix alone; every active criterion must hold.
  const bool adaptive = options_.target_half_width > 0.0 || options_.tolerance_digits > 0;
  if (adaptive && merged_ < shape_.chunks) {
    bool met = true;
    if (options_.target_half_width > 0.0) {
      const Interval ci = clopper_pearson(total_.passed, total_.samples, options_.confidence);
      met = 0.5 * (ci.high - ci.low) <= options_.target_half_width;
    }
    if (options_.tolerance_digits > 0) met = met && tolerance_met_;
    stopped_ = met;
  }
}

// A lot's sum of squares about its own mean joins the pooled within-lot figures.
void RunMerger::close_lot(const LotStats& lot, std::vector<double>& ss,
                          std::vector<std::uint64_t>& dof) const {
  for (std::size_t m = 0; m < lot.stats.size(); ++m) {
    const RunningStats::State st = lot.stats[m].state();
    if (st.count < 1) continue;
    ss[m] += st.m2;
    dof[m] += st.count - 1;
  }
}

void RunMerger::update_tolerance_batches(const ChunkTally& done) {
  const std::size_t m_count = shape_.measurements;
  batch_.merge(done.builds);
  // A batch starts from the first chunk's histograms (set from its pilot values) or from
  // empty ones of the same ranges.
  if (batch_histograms_.empty()) batch_histograms_ = merged_ == 0 ? histograms_ : ranges_;
  add_histogram_values(batch_histograms_, done);
  if ((merged_ + 1) % batch_chunks_ != 0) return;
  // A batch is complete: its figures join the others (JCGM 101:2008, 7.9.4 d-e).
  for (std::size_t m = 0; m < m_count; ++m) {
    const Interval ci = batch_histograms_[m].coverage_interval(options_.confidence);
    BatchFigures& f = batch_figures_[m];
    f.mean.add(batch_.stats[m].mean());
    f.std_dev.add(batch_.stats[m].std_dev());
    f.low.add(ci.low);
    f.high.add(ci.high);
  }
  ++batches_;
  batch_ = Tally(m_count, shape_.specs);
  batch_histograms_.clear();
  tolerance_met_ = tolerance_reached();
}

// 7.9.4 g-j: the run is done when twice the standard deviation of the batch averages of
// the mean, the standard uncertainty and both coverage interval ends lies within the
// numerical tolerance of the standard uncertainty from all trials, for every measurement
// with a spread; a figure that could not be computed for some batch keeps the run going.
bool RunMerger::tolerance_reached() {
  if (batches_ < 2) return false;
  const std::size_t m_count = shape_.measurements;
  bool any = false;
  bool all = true;
  const double h = static_cast<double>(batches_);
  for (std::size_t m = 0; m < m_count; ++m) {
    const double u = total_.stats[m].std_dev();
    if (!(u > 0.0) || !std::isfinite(u)) continue;
    const double delta = numerical_tolerance(u, options_.tolerance_digits);
    tolerance_[m] = delta;
    any = true;
    const BatchFigures& f = batch_figures_[m];
    for (const RunningStats* figure : {&f.mean, &f.std_dev, &f.low, &f.high}) {
      if (figure->count() != batches_ || figure->non_finite() > 0) {
        all = false;
        continue;
      }
      const double s = figure->std_dev() / std::sqrt(h);
      if (!(2.0 * s <= delta)) all = false;
    }
  }
  return any && all;
}

YieldResult RunMerger::result() const {
  const Study::Impl& s = study_;
  const RunOptions& o = options_;
  const std::size_t m_count = shape_.measurements;
  const std::size_t spec_count = shape_.specs;
  const double nan = std::numeric_limits<double>::quiet_NaN();

  YieldResult r;
  r.requested = o.samples;
  r.seed = o.seed;
  r.chunk_size = o.chunk_size;
  r.confidence = o.confidence;
  r.sampler = o.sampler;
  r.replicates = shape_.replicates;
  r.builds_per_lot = o.builds_per_lot;

  auto fraction = [&](std::uint64_t k, std::uint64_t n) {
    return n > 0 ? static_cast<double>(k) / static_cast<double>(n) : nan;
  };
  // Pooled within-lot spread, the open lot included.
  std::vector<double> within_sd(m_count, nan);
  std::vector<std::uint64_t> within_dof = within_dof_;
  if (o.builds_per_lot > 0) {
    std::vector<double> ss = within_ss_;
    if (!open_lot_.stats.empty()) close_lot(open_lot_, ss, within_dof);
    for (std::size_t m = 0; m < m_count; ++m) {
      if (within_dof[m] > 0) within_sd[m] = std::sqrt(ss[m] / static_cast<double>(within_dof[m]));
    }
  }
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
      if (o.builds_per_lot > 0 && &t == &total_) {
        const std::size_t m = s.spec_measurement[j];
        spec.within_lot_capability = capability(spec.spec.min, spec.spec.max, values.mean(),
                                                within_sd[m], within_dof[m] + 1, o.confidence);
      }
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

  const Tally& total = total_;
  r.samples = total.samples;
  r.target_met = stopped_;
  r.complete = merged_ == shape_.chunks || stopped_;
  for (std::size_t v : shape_.varied) {
    r.varied_parameters.push_back(s.design.circuit.parameters()[v].name);
  }
  if (o.keep_samples) {
    r.values = values_;
    r.parameter_values = parameters_;
    r.pass = pass_;
  }
  r.passed = total.passed;
  r.singular = total.singular;
  r.invalid_values = total.invalid;
  r.saturated = total.saturated;
  r.yield = fraction(r.passed, r.samples);
  if (r.samples > 0) {
    r.interval = clopper_pearson(r.passed, r.samples, o.confidence);
    r.wilson_interval = wilson(r.passed, r.samples, o.confidence);
    r.jeffreys_interval = jeffreys(r.passed, r.samples, o.confidence);
    r.failure_upper_bound = clopper_pearson_upper(r.samples - r.passed, r.samples, o.confidence);
  }
  r.specs = spec_summaries(total);
  r.measurements = measurement_summaries(total);
  for (std::size_t m = 0; m < m_count && o.builds_per_lot > 0; ++m) {
    r.measurements[m].within_lot_std_dev = within_sd[m];
    r.measurements[m].within_lot_dof = within_dof[m];
  }
  const std::size_t a_count = parameter_all_.size();
  for (std::size_t a = 0; a < a_count; ++a) {
    r.attribution_parameters.push_back(r.varied_parameters[a]);
    const RunningStats& all = parameter_all_[a];
    const RunningStats& failing = parameter_failing_[a];
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
  for (const auto& p : pairs_) r.correlations.push_back(p.correlation());
  if (a_count > 0 && !regression_rows_.empty()) {
    // Regression and rank statistics of the first builds (RunOptions::regression_samples).
    const std::size_t stride = a_count + m_count;
    const std::size_t rows = regression_rows_.size() / stride;
    r.regression_rows = rows;
    const std::vector<RegressionSummary> fits =
        regress_all(regression_rows_.data(), rows, stride, a_count, m_count);
    for (const RegressionSummary& g : fits) {
      r.standardized_regression.insert(r.standardized_regression.end(), g.standardized.begin(),
                                       g.standardized.end());
      r.rank_correlations.insert(r.rank_correlations.end(), g.rank_correlation.begin(),
                                 g.rank_correlation.end());
      r.regression_r_squared.push_back(g.r_squared);
    }
  }
  for (std::size_t m = 0; m < histograms_.size(); ++m) {
    r.measurements[m].coverage = histograms_[m].coverage_interval(o.confidence);
    r.measurements[m].histogram = histograms_[m];
  }
  if (o.tolerance_digits > 0) {
    r.tolerance_batches = batches_;
    for (std::size_t m = 0; m < m_count; ++m) r.measurements[m].numerical_tolerance = tolerance_[m];
  }

  // Replicate standard errors (L'Ecuyer & Lemieux 2002): each replicate is an unbiased
  // estimate; their spread measures the error of the pooled one.
  const auto yield_error = replicate_error(per_replicate_, [](const Tally& t) {
    return static_cast<double>(t.passed) / static_cast<double>(t.samples);
  });
  r.yield_standard_error = yield_error.first;
  if (std::isfinite(yield_error.first)) {
    const boost::math::students_t_distribution<double> law(static_cast<double>(yield_error.second - 1));
    const double half = boost::math::quantile(law, 0.5 + 0.5 * o.confidence) * yield_error.first;
    r.replicate_interval = Interval{std::max(0.0, r.yield - half), std::min(1.0, r.yield + half)};
  }
  for (std::size_t j = 0; j < spec_count; ++j) {
    r.specs[j].standard_error = replicate_error(per_replicate_, [j](const Tally& t) {
      return static_cast<double>(t.spec_passed[j]) / static_cast<double>(t.samples);
    }).first;
  }
  for (std::size_t m = 0; m < m_count; ++m) {
    r.measurements[m].mean_standard_error = replicate_error(per_replicate_, [m](const Tally& t) {
      return t.stats[m].count() > 0 ? t.stats[m].mean() : std::numeric_limits<double>::quiet_NaN();
    }).first;
  }

  for (std::size_t q = 0; q < shape_.sweep; ++q) {
    const Tally& t = at_temperature_[q];
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

}  // namespace lotwise::detail
