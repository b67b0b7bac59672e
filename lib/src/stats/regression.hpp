#pragma once
// Private: global sensitivity from a sample of builds — standardized regression
// coefficients of a multiple linear fit (they stay meaningful when the parameters are
// correlated, unlike the plain correlations) and Spearman rank correlations (which
// follow monotone but non-linear dependence).
#include <cstddef>
#include <vector>

namespace lotwise::detail {

struct RegressionSummary {
  /// Per parameter: b_j s_j / s_y of the least-squares fit y = b0 + sum b_j x_j; NaN
  /// for a parameter that does not vary in the sample.
  std::vector<double> standardized;
  /// Per parameter: Spearman's rank correlation with y (average ranks for ties).
  std::vector<double> rank_correlation;
  double r_squared = 0.0;  ///< share of y's variance the linear fit explains
  std::size_t rows = 0;    ///< rows with a finite y that entered
};

/// `data` holds `rows` rows of `stride` values; columns [0, x_count) are the parameters
/// and column `y_column` the measurement. Rows whose y is not finite are left out. All
/// results are NaN with fewer than x_count + 2 usable rows or no spread in y.
RegressionSummary regress(const double* data, std::size_t rows, std::size_t stride,
                          std::size_t x_count, std::size_t y_column);

/// regress() for measurement columns x_count .. x_count + y_count - 1 at once. Columns whose
/// values are all finite share one QR factorisation of the parameters and one set of
/// parameter ranks; the others are fitted one by one.
std::vector<RegressionSummary> regress_all(const double* data, std::size_t rows,
                                           std::size_t stride, std::size_t x_count,
                                           std::size_t y_count);

/// Ranks (1-based, ties given their average rank) of n values.
std::vector<double> average_ranks(const std::vector<double>& values);

}  // namespace lotwise::detail
