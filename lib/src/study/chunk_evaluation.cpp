#include "study/chunk_evaluation.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include <boost/math/distributions/normal.hpp>

#include "cpu_dispatch.hpp"

namespace lotwise::detail {

ChunkEvaluator::ChunkEvaluator(const Study::Impl& study, const RunOptions& options,
                               const RunShape& shape, const SobolDirections* directions)
    : study_(study),
      options_(options),
      shape_(shape),
      evaluator_(study.network, study.plan, &shape.varied),
      points_(study.model, options.sampler, options.chunk_size, directions),
      builds_(Evaluator::lanes, study.model.make_scratch()),
      values_(Evaluator::lanes * shape.evaluations * shape.measurements),
      status_(Evaluator::lanes * shape.evaluations),
      withheld_(Evaluator::lanes * shape.evaluations * shape.measurements),
      any_saturated_(Evaluator::lanes * shape.evaluations),
      spec_ok_(shape.specs),
      spec_saturated_(shape.specs),
      block_points_(Evaluator::lanes * study.model.dimension()) {
  static_assert(Evaluator::lanes <= PointStream::most_points, "a block's points are drawn at once");
  entered_.resize(shape.measurements);
  entered_columns_.resize(shape.measurements);
  for (auto& e : entered_) e.reserve(static_cast<std::size_t>(options.chunk_size) * shape.evaluations);
  for (std::size_t r = 0; r < Evaluator::lanes * shape.evaluations; ++r) {
    theta_.insert(theta_.end(), study.nominal_parameters.begin(), study.nominal_parameters.end());
  }
  if (shape.attribution) {
    const std::size_t a = shape.varied.size();
    attribution_rows_.resize(static_cast<std::size_t>(options.chunk_size) * shape.evaluations *
                             (a + shape.measurements + 1));
    moment_scratch_.resize(3 * a);
    parameter_scratch_.resize(8 * a);
  }
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
  if (o.builds_per_lot > 0) {
    // The lots this chunk's builds span; their moments are made as each lot begins.
    tally.lots.reserve(static_cast<std::size_t>(range.count / o.builds_per_lot + 2));
  }
  const std::uint64_t regression_end = std::min(range.first_sample + range.count, shape_.regression_samples);
  if (regression_end > range.first_sample) {
    tally.regression_rows.reserve(static_cast<std::size_t>(regression_end - range.first_sample) *
                                  evaluations * (v_count + m_count));
  }

  attribution_filled_ = 0;
  for (auto& e : entered_) e.clear();
  constexpr std::size_t lanes = Evaluator::lanes;
  const std::size_t p_count = s.nominal_parameters.size();
  const std::size_t dimension = s.model.dimension();
  const double* thetas[lanes];
  double* value_rows[lanes];
  SolveStatus statuses[lanes];
  points_.start(o.seed, k, range.replicate, range.begin, static_cast<std::size_t>(range.count));
  // Values straight from the point when they do not depend on the temperature.
  const bool one_pass = evaluations == 1 && s.model.maps_in_one_pass();
  // Blocks may take tally_entered_block unless the chunk keeps more than build-wide counts
  // (temperatures, lots, raw values, kept rows).
  const bool plain_chunk = evaluations == 1 && sweep == 0 && o.builds_per_lot == 0 && !pilot &&
                           !o.keep_samples;
  for (std::uint64_t t0 = 0; t0 < range.count; t0 += lanes) {
    const auto block = static_cast<std::size_t>(std::min<std::uint64_t>(lanes, range.count - t0));
    // Draw the block's builds in order: the same points as one build at a time.
    points_.next_into(block_points_.data(), block);
    for (std::size_t b = 0; b < block; ++b) {
      const std::uint64_t i = range.first_sample + t0 + b;
      double* const point = block_points_.data() + b * dimension;  // no element when dimension is 0
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
        for (std::size_t j = 0; j < lot_coordinates_.size(); ++j) point[lot_coordinates_[j]] = lot_values_[j];
      }
      if (!one_pass) s.model.prepare(point, builds_[b]);
    }
    if (one_pass) s.model.prepare_values(block_points_.data(), block, builds_.data(), theta_.data(), p_count);
    // Evaluate each operating temperature of the block's builds side by side.
    for (std::size_t q = 0; q < evaluations; ++q) {
      for (std::size_t b = 0; b < block; ++b) {
        const std::size_t row = b * evaluations + q;
        double* theta = &theta_[row * p_count];
        if (!one_pass) s.model.apply(builds_[b], s.model.temperature_of(builds_[b], q), theta);
        thetas[b] = theta;
        value_rows[b] = &values_[row * m_count];
      }
      evaluator_.evaluate_lanes(thetas, value_rows, statuses, block);
      for (std::size_t b = 0; b < block; ++b) {
        const std::size_t row = b * evaluations + q;
        status_[row] = statuses[b];
        any_saturated_[row] = evaluator_.saturated_opamp_lane(b) != Network::npos;
        if (any_saturated_[row]) {  // else every flag is clear
          std::copy(evaluator_.saturated_lane(b), evaluator_.saturated_lane(b) + m_count,
                    withheld_.begin() + static_cast<std::ptrdiff_t>(row * m_count));
        }
      }
    }
    // Tally in build order, exactly as one build at a time; a block with nothing but
    // entered values and build-wide counts, measurement by measurement.
    if (plain_chunk && range.first_sample + t0 >= regression_end && all_entered(block)) {
      tally_entered_block(tally, block);
      continue;
    }
    for (std::size_t b = 0; b < block; ++b) {
      const std::uint64_t i = range.first_sample + t0 + b;
      LotStats* lot_stats = nullptr;
      if (o.builds_per_lot > 0) {
        const std::uint64_t lot = i / o.builds_per_lot;
        if (tally.lots.empty() || tally.lots.back().lot != lot) {
          tally.lots.push_back(LotStats{lot, std::vector<RunningStats>(m_count)});
        }
        lot_stats = &tally.lots.back();
      }
      bool saturated = false;  // at some evaluation of this build
      bool pass = true;
      SolveStatus failure = SolveStatus::ok;  // the build's first unevaluated state
      for (std::size_t q = 0; q < evaluations; ++q) {
        const std::size_t row = b * evaluations + q;
        const double* theta = &theta_[row * p_count];
        const double* values = &values_[row * m_count];
        const unsigned char* withheld =
            any_saturated_[row] ? &withheld_[row * m_count] : evaluator_.no_saturation();
        const SolveStatus status = status_[row];
        Tally* here = sweep ? &tally.temperatures[q] : nullptr;
        bool ok_here = status == SolveStatus::ok;
        // The build's spec flags start at its first evaluation (no fill per build).
        const bool first = q == 0;
        if (status == SolveStatus::ok) {
          // Values withheld because an op-amp saturated stay out of the statistics; their
          // specs fail, counted as failures for saturation.
          if (any_saturated_[row]) {
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
            entered_[m].push_back(values[m]);
            if (here) here->stats[m].add(values[m]);
            if (lot_stats) lot_stats->stats[m].add(values[m]);
            if (pilot) tally.pilot.push_back(values[m]);
          }
          for (std::size_t j = 0; j < spec_count; ++j) {
            const bool ok = s.design.specs[j].passes(values[s.spec_measurement[j]]);
            spec_ok_[j] = (first || spec_ok_[j]) && ok;
            const bool spec_withheld = withheld[s.spec_measurement[j]] != 0;
            spec_saturated_[j] = (!first && spec_saturated_[j]) || spec_withheld;
            if (spec_withheld && here) ++here->spec_saturated[j];
            if (here) here->spec_passed[j] += ok;
            ok_here = ok_here && ok;
          }
        } else {
          std::fill(spec_ok_.begin(), spec_ok_.end(), std::uint8_t{0});
          if (first) std::fill(spec_saturated_.begin(), spec_saturated_.end(), std::uint8_t{0});
          if (failure == SolveStatus::ok) failure = status;
          if (here) ++(status == SolveStatus::singular ? here->singular : here->invalid);
        }
        if (here) {
          ++here->samples;
          here->passed += ok_here;
        }
        pass = pass && ok_here;
        if (a_count > 0) {
          // One row per evaluation; the chunk's attribution moments come from the rows at
          // its end. A value that did not enter the statistics enters no co-moment (NaN).
          double* out = next_attribution_row();
          for (std::size_t a = 0; a < a_count; ++a) out[a] = theta[varied[a]];
          for (std::size_t m = 0; m < m_count; ++m) {
            const bool entered = status == SolveStatus::ok && !withheld[m];
            out[a_count + m] = entered ? values[m] : std::numeric_limits<double>::quiet_NaN();
          }
          out[a_count + m_count] = ok_here ? 1.0 : 0.0;
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
  }
  // The histograms take exactly the values that entered.
  if (!ranges.empty()) tally.histogram_values.assign(entered_.begin(), entered_.end());
  bool same_count = true;  // as in every chunk without withheld values
  for (std::size_t m = 0; m < m_count; ++m) {
    same_count = same_count && entered_[m].size() == entered_[0].size();
    entered_columns_[m] = entered_[m].data();
  }
  if (same_count && m_count > 0) {
    RunningStats::of_each(entered_columns_.data(), m_count, entered_[0].size(), tally.builds.stats.data());
  } else {
    for (std::size_t m = 0; m < m_count; ++m) {
      tally.builds.stats[m] = RunningStats::of(entered_[m].data(), entered_[m].size());
    }
  }
  if (a_count > 0) attribution_moments(tally, a_count, m_count);
  return tally;
}

double* ChunkEvaluator::next_attribution_row() {
  double* row = attribution_rows_.data() + attribution_filled_;
  attribution_filled_ += shape_.varied.size() + shape_.measurements + 1;
  return row;
}

bool ChunkEvaluator::all_entered(std::size_t block) const {
  bool entered = true;
  for (std::size_t b = 0; b < block; ++b) {
    entered = entered && status_[b] == SolveStatus::ok && !any_saturated_[b];
  }
  return entered;
}

// One evaluation per build, every status ok and nothing withheld: each measurement's
// values enter its statistics and histogram in build order (the order the general loop
// gives each of them), then the specs, each across the block, and the attribution rows
// build by build.
void ChunkEvaluator::tally_entered_block(ChunkTally& tally, std::size_t block) {
  const Study::Impl& s = study_;
  const std::size_t m_count = shape_.measurements;
  const std::size_t spec_count = shape_.specs;
  for (std::size_t m = 0; m < m_count; ++m) {
    std::vector<double>& entered = entered_[m];
    const std::size_t at = entered.size();
    entered.resize(at + block);  // within the reserve
    for (std::size_t b = 0; b < block; ++b) entered[at + b] = values_[b * m_count + m];
  }
  // Spec by spec across the block, its limits held in registers; then build by build.
  bool passes[Evaluator::lanes];
  std::fill(passes, passes + block, true);
  for (std::size_t j = 0; j < spec_count; ++j) {
    const Spec& spec = s.design.specs[j];
    const double* column = values_.data() + s.spec_measurement[j];
    std::uint64_t count = 0;
    for (std::size_t b = 0; b < block; ++b) {
      const bool ok = spec.passes(column[b * m_count]);
      count += ok;
      passes[b] = passes[b] && ok;
    }
    tally.builds.spec_passed[j] += count;
  }
  for (std::size_t b = 0; b < block; ++b) tally.builds.passed += passes[b];
  tally.builds.samples += block;
  if (!shape_.attribution || shape_.varied.empty()) return;  // no attribution rows
  const std::size_t p_count = s.nominal_parameters.size();
  const std::size_t a_count = shape_.varied.size();
  for (std::size_t b = 0; b < block; ++b) {
    const double* values = values_.data() + b * m_count;
    const double* theta = &theta_[b * p_count];
    double* out = next_attribution_row();
    for (std::size_t a = 0; a < a_count; ++a) out[a] = theta[shape_.varied[a]];
    std::copy(values, values + m_count, out + a_count);
    out[a_count + m_count] = passes[b] ? 1.0 : 0.0;
  }
}

// Each chunk's attribution moments from its records (one row per evaluation: the varied
// parameters, the measurements, NaN where one did not enter, and the pass flag). The
// common case, every parameter finite and every measurement entered in every row, takes
// two passes: sums, least and greatest values; then the centred squares and every
// measurement's co-moments, each parameter's deviation taken once per row. Every
// accumulator sums in row order with the general loops' operations, so the same bits.
LOTWISE_AVX2_CLONES ChunkEvaluator::Written ChunkEvaluator::common_moments(
    ChunkTally& tally, std::size_t a_count, std::size_t m_count) const {
  const std::size_t stride = a_count + m_count + 1;
  const std::size_t rows = attribution_filled_ / stride;
  const double* data = attribution_rows_.data();
  std::vector<double>& acc = parameter_scratch_;  // 8 per parameter
  std::fill(acc.begin(), acc.end(), 0.0);
  // Eight disjoint parts of one array (restrict: so the loops vectorise).
  double* __restrict sum = acc.data();
  double* __restrict sum_f = sum + a_count;
  double* __restrict m2 = sum + 2 * a_count;
  double* __restrict m2_f = sum + 3 * a_count;
  double* __restrict low = sum + 4 * a_count;
  double* __restrict high = sum + 5 * a_count;
  double* __restrict low_f = sum + 6 * a_count;
  double* __restrict high_f = sum + 7 * a_count;
  std::vector<double>& pair = pair_scratch_;  // the measurements' moments and co-moments
  pair.assign(2 * m_count + m_count * a_count + a_count, 0.0);
  double* __restrict my = pair.data();
  double* __restrict m2y = my + m_count;
  double* __restrict cxy = m2y + m_count;
  double* __restrict dx = cxy + m_count * a_count;
  const double inf = std::numeric_limits<double>::infinity();
  std::fill(low, low + a_count, inf);
  std::fill(low_f, low_f + a_count, inf);
  std::fill(high, high + a_count, -inf);
  std::fill(high_f, high_f + a_count, -inf);
  // Parameter values are finite but for draws outside the physical range; such a chunk
  // takes attribution_moments' careful path, and a measurement that did not enter a row
  // (NaN) its general pairs. Finiteness without a branch: x * 0 is 0 for a finite x and
  // NaN otherwise, and a NaN stays in a sum.
  double parameter_check = 0.0, measurement_check = 0.0;
  std::uint64_t failing = 0;
  for (std::size_t r = 0; r < rows; ++r) {
    const double* row = data + r * stride;
    for (std::size_t a = 0; a < a_count; ++a) {
      parameter_check += row[a] * 0.0;
      sum[a] += row[a];
      low[a] = std::min(low[a], row[a]);
      high[a] = std::max(high[a], row[a]);
    }
    for (std::size_t m = 0; m < m_count; ++m) {
      measurement_check += row[a_count + m] * 0.0;
      my[m] += row[a_count + m];
    }
    if (row[stride - 1] != 0.0) continue;
    ++failing;
    for (std::size_t a = 0; a < a_count; ++a) {
      sum_f[a] += row[a];
      low_f[a] = std::min(low_f[a], row[a]);
      high_f[a] = std::max(high_f[a], row[a]);
    }
  }
  const bool entered = rows > 0 && measurement_check == 0.0;
  if (!(parameter_check == 0.0)) return Written::nothing;
  {
    const double n = static_cast<double>(rows);
    for (std::size_t a = 0; a < a_count; ++a) {
      sum[a] /= n;  // now the means
      if (failing > 0) sum_f[a] /= static_cast<double>(failing);
    }
    for (std::size_t m = 0; m < m_count; ++m) my[m] /= n;
    for (std::size_t r = 0; r < rows; ++r) {
      const double* row = data + r * stride;
      for (std::size_t a = 0; a < a_count; ++a) {
        dx[a] = row[a] - sum[a];
        m2[a] += dx[a] * dx[a];
      }
      if (entered) {
        for (std::size_t m = 0; m < m_count; ++m) {
          const double dy = row[a_count + m] - my[m];
          m2y[m] += dy * dy;
          double* __restrict c = cxy + m * a_count;
          for (std::size_t a = 0; a < a_count; ++a) c[a] += dx[a] * dy;
        }
      }
      if (row[stride - 1] != 0.0) continue;
      for (std::size_t a = 0; a < a_count; ++a) m2_f[a] += (row[a] - sum_f[a]) * (row[a] - sum_f[a]);
    }
    for (std::size_t a = 0; a < a_count; ++a) {
      tally.parameter_all[a] = RunningStats::from_state(
          RunningStats::State{rows, 0, rows > 0 ? sum[a] : 0.0, m2[a], low[a], high[a]});
      tally.parameter_failing[a] = RunningStats::from_state(
          RunningStats::State{failing, 0, failing > 0 ? sum_f[a] : 0.0, m2_f[a], low_f[a], high_f[a]});
    }
    if (entered) {
      for (std::size_t m = 0; m < m_count; ++m) {
        for (std::size_t a = 0; a < a_count; ++a) {
          tally.pairs[m * a_count + a] =
              PairMoments{n, sum[a], my[m], m2[a], m2y[m], cxy[m * a_count + a]};
        }
      }
      return Written::everything;
    }
  }
  return Written::parameters;
}

// The rest of a chunk's attribution moments, value by value, where common_moments left
// them: parameters with a value out of the physical range, measurements that did not
// enter every row.
void ChunkEvaluator::attribution_moments(ChunkTally& tally, std::size_t a_count,
                                         std::size_t m_count) const {
  const Written written = common_moments(tally, a_count, m_count);
  if (written == Written::everything) return;
  const bool finite = written == Written::parameters;
  const std::size_t stride = a_count + m_count + 1;
  const std::size_t rows = attribution_filled_ / stride;
  const double* data = attribution_rows_.data();
  for (std::size_t a = 0; a < a_count && !finite; ++a) {
    for (const bool failing_only : {false, true}) {
      std::uint64_t n = 0, non_finite = 0;
      double sum = 0.0, low = std::numeric_limits<double>::infinity(), high = -low;
      for (std::size_t r = 0; r < rows; ++r) {
        const double* row = data + r * stride;
        if (failing_only && row[stride - 1] != 0.0) continue;
        const double x = row[a];
        if (!std::isfinite(x)) {
          ++non_finite;
          continue;
        }
        ++n;
        sum += x;
        low = std::min(low, x);
        high = std::max(high, x);
      }
      RunningStats::State st;
      st.count = n;
      st.non_finite = non_finite;
      st.mean = n > 0 ? sum / static_cast<double>(n) : 0.0;
      st.min = low;
      st.max = high;
      for (std::size_t r = 0; r < rows && n > 0; ++r) {
        const double* row = data + r * stride;
        if (failing_only && row[stride - 1] != 0.0) continue;
        if (std::isfinite(row[a])) st.m2 += (row[a] - st.mean) * (row[a] - st.mean);
      }
      (failing_only ? tally.parameter_failing : tally.parameter_all)[a] = RunningStats::from_state(st);
    }
  }
  // Each (measurement, parameter) pair over the rows where the measurement entered.
  std::vector<double>& mx = moment_scratch_;
  for (std::size_t m = 0; m < m_count; ++m) {
    const std::size_t y = a_count + m;
    double n = 0.0, my = 0.0;
    std::fill(mx.begin(), mx.end(), 0.0);
    for (std::size_t r = 0; r < rows; ++r) {
      const double* row = data + r * stride;
      if (!std::isfinite(row[y])) continue;
      n += 1.0;
      my += row[y];
      for (std::size_t a = 0; a < a_count; ++a) mx[a] += row[a];
    }
    if (n == 0.0) continue;
    my /= n;
    for (std::size_t a = 0; a < a_count; ++a) mx[a] /= n;
    double m2y = 0.0;
    double* m2x = mx.data() + a_count;
    double* cxy = mx.data() + 2 * a_count;
    for (std::size_t r = 0; r < rows; ++r) {
      const double* row = data + r * stride;
      if (!std::isfinite(row[y])) continue;
      const double dy = row[y] - my;
      m2y += dy * dy;
      for (std::size_t a = 0; a < a_count; ++a) {
        const double dx = row[a] - mx[a];
        m2x[a] += dx * dx;
        cxy[a] += dx * dy;
      }
    }
    for (std::size_t a = 0; a < a_count; ++a) {
      tally.pairs[m * a_count + a] = PairMoments{n, mx[a], my, m2x[a], m2y, cxy[a]};
    }
  }
}

}  // namespace lotwise::detail
