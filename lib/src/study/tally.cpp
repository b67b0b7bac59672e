#include "study/tally.hpp"

namespace lotwise::detail {

void Tally::merge(const Tally& o) {
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

}  // namespace lotwise::detail
