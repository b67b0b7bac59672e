#include "stats/regression.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <utility>

#include <Eigen/Dense>

namespace lotwise::detail {
namespace {

double pearson(const std::vector<double>& a, const std::vector<double>& b) {
  const std::size_t n = a.size();
  double ma = 0.0, mb = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    ma += a[i];
    mb += b[i];
  }
  ma /= static_cast<double>(n);
  mb /= static_cast<double>(n);
  double saa = 0.0, sbb = 0.0, sab = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    saa += (a[i] - ma) * (a[i] - ma);
    sbb += (b[i] - mb) * (b[i] - mb);
    sab += (a[i] - ma) * (b[i] - mb);
  }
  if (!(saa > 0.0) || !(sbb > 0.0)) return std::numeric_limits<double>::quiet_NaN();
  return sab / std::sqrt(saa * sbb);
}

}  // namespace

std::vector<double> average_ranks(const std::vector<double>& values) {
  const std::size_t n = values.size();
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return values[a] < values[b]; });
  std::vector<double> ranks(n);
  for (std::size_t i = 0; i < n;) {
    std::size_t j = i + 1;
    while (j < n && values[order[j]] == values[order[i]]) ++j;
    const double rank = 0.5 * static_cast<double>(i + 1 + j);  // mean of ranks i+1 .. j
    for (std::size_t k = i; k < j; ++k) ranks[order[k]] = rank;
    i = j;
  }
  return ranks;
}

namespace {

// The fit and ranks of measurement columns `y_columns` over `rows` rows whose parameter and
// measurement values are all finite: one QR factorisation of the centred parameters and
// one ranking of each parameter serve every measurement.
std::vector<RegressionSummary> fit_complete(const double* data, std::size_t rows,
                                            std::size_t stride, std::size_t x_count,
                                            const std::vector<std::size_t>& y_columns) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  std::vector<RegressionSummary> out(y_columns.size());
  for (RegressionSummary& r : out) {
    r.standardized.assign(x_count, nan);
    r.rank_correlation.assign(x_count, nan);
    r.r_squared = nan;
    r.rows = rows;
  }
  if (rows < x_count + 2) return out;

  const auto n = static_cast<Eigen::Index>(rows);
  Eigen::MatrixXd x(n, static_cast<Eigen::Index>(x_count));
  std::vector<std::size_t> active;  // parameters with a spread; the others stay NaN
  std::vector<double> sd(x_count, 0.0);
  std::vector<std::vector<double>> x_ranks(x_count);
  std::vector<double> column(rows);
  for (std::size_t j = 0; j < x_count; ++j) {
    for (std::size_t i = 0; i < rows; ++i) column[i] = data[i * stride + j];
    auto c = x.col(static_cast<Eigen::Index>(j));
    c = Eigen::Map<const Eigen::VectorXd>(column.data(), n);
    c.array() -= c.mean();
    const double s = c.squaredNorm();
    if (s > 0.0) {
      active.push_back(j);
      sd[j] = std::sqrt(s);  // common factor 1/sqrt(n - 1) cancels in the ratios below
      x_ranks[j] = average_ranks(column);
    }
  }
  Eigen::MatrixXd a(n, static_cast<Eigen::Index>(active.size()));
  for (std::size_t k = 0; k < active.size(); ++k) {
    a.col(static_cast<Eigen::Index>(k)) = x.col(static_cast<Eigen::Index>(active[k]));
  }
  // Column-pivoting QR: stable when parameters are strongly correlated.
  // (none to factor when no parameter has a spread).
  Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr;
  if (!active.empty()) qr.compute(a);
  const bool full_rank = !active.empty() && qr.rank() == static_cast<Eigen::Index>(active.size());
  for (std::size_t k = 0; k < y_columns.size(); ++k) {
    RegressionSummary& r = out[k];
    for (std::size_t i = 0; i < rows; ++i) column[i] = data[i * stride + y_columns[k]];
    Eigen::VectorXd y = Eigen::Map<const Eigen::VectorXd>(column.data(), n);
    y.array() -= y.mean();
    const double syy = y.squaredNorm();
    if (!(syy > 0.0)) continue;
    if (full_rank) {
      const Eigen::VectorXd b = qr.solve(y);
      const double sy = std::sqrt(syy);
      for (std::size_t j = 0; j < active.size(); ++j) {
        r.standardized[active[j]] = b(static_cast<Eigen::Index>(j)) * sd[active[j]] / sy;
      }
      r.r_squared = 1.0 - (y - a * b).squaredNorm() / syy;
    }
    // Spearman: Pearson correlation of the ranks.
    const std::vector<double> y_ranks = average_ranks(column);
    for (std::size_t j : active) r.rank_correlation[j] = pearson(x_ranks[j], y_ranks);
  }
  return out;
}

bool row_complete(const double* row, std::size_t x_count, std::size_t y_column) {
  bool ok = std::isfinite(row[y_column]);
  for (std::size_t j = 0; j < x_count && ok; ++j) ok = std::isfinite(row[j]);
  return ok;
}

}  // namespace

RegressionSummary regress(const double* data, std::size_t rows, std::size_t stride,
                          std::size_t x_count, std::size_t y_column) {
  // The complete rows, packed as (parameters, measurement).
  std::vector<double> packed;
  std::size_t n = 0;
  for (std::size_t i = 0; i < rows; ++i) {
    const double* row = data + i * stride;
    if (!row_complete(row, x_count, y_column)) continue;
    packed.insert(packed.end(), row, row + x_count);
    packed.push_back(row[y_column]);
    ++n;
  }
  return fit_complete(packed.data(), n, x_count + 1, x_count, {x_count})[0];
}

std::vector<RegressionSummary> regress_all(const double* data, std::size_t rows,
                                           std::size_t stride, std::size_t x_count,
                                           std::size_t y_count) {
  // Measurements complete on every row share one fit; the others are fitted alone on
  // their own complete rows.
  std::vector<RegressionSummary> out(y_count);
  std::vector<std::size_t> shared, slot;
  for (std::size_t k = 0; k < y_count; ++k) {
    bool all = true;
    for (std::size_t i = 0; i < rows && all; ++i) all = row_complete(data + i * stride, x_count, x_count + k);
    if (all) {
      shared.push_back(x_count + k);
      slot.push_back(k);
    } else {
      out[k] = regress(data, rows, stride, x_count, x_count + k);
    }
  }
  if (shared.empty()) return out;
  std::vector<RegressionSummary> fits = fit_complete(data, rows, stride, x_count, shared);
  for (std::size_t i = 0; i < slot.size(); ++i) out[slot[i]] = std::move(fits[i]);
  return out;
}

}  // namespace lotwise::detail
