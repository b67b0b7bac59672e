#pragma once
// Private: streaming co-moments of a parameter and a measurement (mergeable in chunk order),
// for the sample correlation that ranks parameters by their global influence.
#include <cmath>
#include <cstdint>
#include <limits>

namespace lotwise::detail {

struct PairMoments {
  double n = 0.0, mx = 0.0, my = 0.0, m2x = 0.0, m2y = 0.0, cxy = 0.0;

  // Welford's bivariate update; allocates nothing.
  void add(double x, double y) {
    n += 1.0;
    const double dx = x - mx;
    mx += dx / n;
    const double dy = y - my;
    my += dy / n;
    m2x += dx * (x - mx);
    m2y += dy * (y - my);
    cxy += dx * (y - my);
  }

  // Chan, Golub & LeVeque's pairwise merge.
  void merge(const PairMoments& o) {
    if (o.n == 0.0) return;
    if (n == 0.0) {
      *this = o;
      return;
    }
    const double total = n + o.n;
    const double dx = o.mx - mx, dy = o.my - my;
    const double f = n * o.n / total;
    m2x += o.m2x + dx * dx * f;
    m2y += o.m2y + dy * dy * f;
    cxy += o.cxy + dx * dy * f;
    mx += dx * o.n / total;
    my += dy * o.n / total;
    n = total;
  }

  double correlation() const {
    if (n < 2.0 || !(m2x > 0.0) || !(m2y > 0.0)) return std::numeric_limits<double>::quiet_NaN();
    return cxy / std::sqrt(m2x * m2y);
  }
};

}  // namespace lotwise::detail
