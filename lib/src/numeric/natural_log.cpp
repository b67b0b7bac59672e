#include "numeric/natural_log.hpp"

#include <cmath>
#include <limits>

#include "cpu_dispatch.hpp"

namespace lotwise::detail {

namespace {

bool is_positive_normal(double x) {
  return x >= std::numeric_limits<double>::min() && x <= std::numeric_limits<double>::max();
}

// The common case as one loop the compiler vectorises (no branch in it), then the rare
// inputs one by one.
LOTWISE_AVX2_CLONES void logs_of(const double* x, double* out, std::size_t count) {
  for (std::size_t i = 0; i < count; ++i) out[i] = log_of_normal(x[i]);
  for (std::size_t i = 0; i < count; ++i) {
    if (!is_positive_normal(x[i])) out[i] = std::log(x[i]);
  }
}

}  // namespace

double natural_log(double x) { return is_positive_normal(x) ? log_of_normal(x) : std::log(x); }

void natural_log_each(const double* x, double* out, std::size_t count) { logs_of(x, out, count); }

}  // namespace lotwise::detail
