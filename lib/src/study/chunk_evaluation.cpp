#include "study/chunk_evaluation.hpp"

#include <algorithm>
#include <cmath>

#include <boost/math/distributions/normal.hpp>

namespace lotwise::detail {

ChunkEvaluator::ChunkEvaluator(const Study::Impl& study, const RunOptions& options,
                               const RunShape& shape, const SobolDirections* directions)
    : study_(study),
      options_(options),
      shape_(shape),
      evaluator_(study.network, study.plan),
      points_(study.model, options.sampler, options.chunk_size, directions),
      build_(study.model.make_scratch()),
      theta_(study.nominal_parameters),
      values_(shape.measurements),
      spec_ok_(shape.specs),
      spec_saturated_(shape.specs),
      point_(study.model.dimension()) {
  if (options.builds_per_lot > 0) {
    for (std::size_t c = 0; c < study.model.coordinates().size(); ++c) {
      if (study.model.coordinates()[c].lot) lot_coordinates_.push_back(c);
    }
    lot_values_.resize(lot_coordinates_.size());
  }
}

namespace {

// SplitMix64 (Steele, Lea & Flood, OOPSLA 2014): a well-mixed 64-bit value from a key.
std::uint64_t mix(std::uint64_t x) {
  x += 0x9e3779b97f4a7c15ull;
  x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9ull;
  x = (x ^ (x >> 27)) * 0x94d049bb133111ebull;
  return x ^ (x >> 31);
}

}  // namespace

ChunkTally ChunkEvaluator::evaluate(std::uint64_t k, const std::vector<Histogram>& ranges) {
  const Study::Impl& s = study_;
  const RunOptions& o = options_;
  const std::size_t m_count = shape_.measurements;
  const std::size_t spec_count = shape_.specs;
  const std::size_t evaluations = shape_.evaluations;
  const std::size_t sweep = shape_.sweep;
  const std::vector<std::size_t>& varied = shape_.varied;
  const std::size_t v_count = varied.size();
  const std::size_t a_count = shape_.attribution ? v_count : 0;
  const ChunkLayout::Range range = shape_.layout.range(k);

  ChunkTally tally(m_count, spec_count, sweep);
  tally.index = k;
  tally.replicate = range.replicate;
  tally.first_sample = range.first_sample;
  tally.histograms = ranges;
  tally.pairs.resize(m_count * a_count);
  tally.parameter_all.resize(a_count);
  tally.parameter_failing.resize(a_count);
  const std::size_t rows = static_cast<std::size_t>(range.count) * evaluations;
  const bool pilot = shape_.histograms && ranges.empty();
  if (pilot) tally.pilot.reserve(rows * m_count);
  if (o.keep_samples) {
    tally.values.reserve(rows * m_count);
    tally.parameters.reserve(rows * v_count);
    tally.pass.reserve(static_cast<std::size_t>(range.count));
  }
  const std::uint64_t regression_end = std::min(range.first_sample + range.count, shape_.regression_samples);
  if (regression_end > range.first_sample) {
    tally.regression_rows.reserve(static_cast<std::size_t>(regression_end - range.first_sample) *
                                  evaluations * (v_count + m_count));
  }

  double* theta = theta_.data();
  double* values = values_.data();
  points_.start(o.seed, k, range.replicate, range.begin, static_cast<std::size_t>(range.count));
  for (std::uint64_t t = 0; t < range.count; ++t) {
    const std::uint64_t i = range.first_sample + t;
    const double* point = points_.next();
    if (!lot_coordinates_.empty()) {
      // The lot's deviations come from a stream keyed by (seed, lot, coordinate) alone, so
      // every build of the lot sees the same ones whichever chunk it falls in.
      const std::uint64_t lot = i / o.builds_per_lot;
      if (lot != current_lot_) {
        current_lot_ = lot;
        for (std::size_t j = 0; j < lot_coordinates_.size(); ++j) {
          const std::size_t c = lot_coordinates_[j];
          const double u = to_unit(mix(mix(mix(o.seed) ^ lot) ^ c));
          lot_values_[j] = s.model.coordinates()[c].normal
                               ? boost::math::quantile(boost::math::normal_distribution<double>(), u)
                               : u;
        }
      }
      std::copy(point, point + point_.size(), point_.begin());
      for (std::size_t j = 0; j < lot_coordinates_.size(); ++j) point_[lot_coordinates_[j]] = lot_values_[j];
      point = point_.data();
    }
    s.model.prepare(point, build_);
    LotStats* lot_stats = nullptr;
    if (o.builds_per_lot > 0) {
      const std::uint64_t lot = i / o.builds_per_lot;
      if (tally.lots.empty() || tally.lots.back().lot != lot) {
        tally.lots.push_back(LotStats{lot, std::vector<RunningStats>(m_count)});
      }
      lot_stats = &tally.lots.back();
    }
    std::fill(spec_ok_.begin(), spec_ok_.end(), std::uint8_t{1});
    std::fill(spec_saturated_.begin(), spec_saturated_.end(), std::uint8_t{0});
    bool saturated = false;  // at some evaluation of this build
    bool pass = true;
    SolveStatus failure = SolveStatus::ok;  // the build's first unevaluated state
    for (std::size_t q = 0; q < evaluations; ++q) {
      s.model.apply(build_, s.model.temperature_of(build_, q), theta);
      const SolveStatus status = evaluator_.evaluate(theta, values);
      Tally* here = sweep ? &tally.temperatures[q] : nullptr;
      bool ok_here = status == SolveStatus::ok;
      if (status == SolveStatus::ok) {
        // Values withheld because an op-amp saturated stay out of the statistics; their
        // specs fail, counted as failures for saturation.
        const std::vector<unsigned char>& withheld = evaluator_.saturated();
        if (evaluator_.any_saturated()) {
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
          if (lot_stats) lot_stats->stats[m].add(values[m]);
          if (!tally.histograms.empty()) tally.histograms[m].add(values[m]);
          if (pilot) tally.pilot.push_back(values[m]);
          if (a_count > 0 && std::isfinite(values[m])) {
            for (std::size_t a = 0; a < a_count; ++a) {
              tally.pairs[m * a_count + a].add(theta[varied[a]], values[m]);
            }
          }
        }
        for (std::size_t j = 0; j < spec_count; ++j) {
          const bool ok = s.design.specs[j].passes(values[s.spec_measurement[j]]);
          spec_ok_[j] = spec_ok_[j] && ok;
          if (withheld[s.spec_measurement[j]]) {
            spec_saturated_[j] = 1;
            if (here) ++here->spec_saturated[j];
          }
          if (here) here->spec_passed[j] += ok;
          ok_here = ok_here && ok;
        }
      } else {
        std::fill(spec_ok_.begin(), spec_ok_.end(), std::uint8_t{0});
        if (failure == SolveStatus::ok) failure = status;
        if (here) ++(status == SolveStatus::singular ? here->singular : here->invalid);
      }
      if (here) {
        ++here->samples;
        here->passed += ok_here;
      }
      pass = pass && ok_here;
      for (std::size_t a = 0; a < a_count; ++a) {
        tally.parameter_all[a].add(theta[varied[a]]);
        if (!ok_here) tally.parameter_failing[a].add(theta[varied[a]]);
      }
      if (o.keep_samples) {
        tally.values.insert(tally.values.end(), values, values + m_count);
        for (std::size_t a = 0; a < v_count; ++a) tally.parameters.push_back(theta[varied[a]]);
      }
      if (i < regression_end) {
        for (std::size_t a = 0; a < v_count; ++a) tally.regression_rows.push_back(theta[varied[a]]);
        tally.regression_rows.insert(tally.regression_rows.end(), values, values + m_count);
      }
    }
    ++tally.builds.samples;
    for (std::size_t j = 0; j < spec_count; ++j) tally.builds.spec_passed[j] += spec_ok_[j];
    if (failure == SolveStatus::singular) {
      ++tally.builds.singular;
    } else if (failure != SolveStatus::ok) {
      ++tally.builds.invalid;
    } else if (saturated) {
      ++tally.builds.saturated;
      for (std::size_t j = 0; j < spec_count; ++j) {
        tally.builds.spec_saturated[j] += spec_saturated_[j] && !spec_ok_[j];
      }
    }
    tally.builds.passed += pass;
    if (o.keep_samples) tally.pass.push_back(pass);
  }
  return tally;
}

}  // namespace lotwise::detail
