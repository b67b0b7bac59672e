#pragma once
// Private: the variation model of a study. Every random input is one standard coordinate
// (standard normal or uniform on (0, 1)); samplers fill points of coordinates and this
// model maps a point to parameter values: correlation through a Cholesky factor (Gaussian
// copula), each law's inverse distribution function, lot and matched-network shares, and
// temperature coefficients.
#include <cstddef>
#include <string>
#include <vector>

#include "lotwise/circuit.hpp"
#include "lotwise/variation.hpp"
#include "variation/spread.hpp"

namespace lotwise::detail {

/// One random input. A sampler gives a standard normal value where `normal`, else a
/// uniform one on [0, 1] (on (0, 1) for the quasi-random samplers).
struct Coordinate {
  bool normal = false;
  std::string name;  ///< "R1", "R1.tempco", "lot of [[vary]] 1", "temperature", ...
  bool lot = false;  ///< a lot's deviation: shared by the builds of one lot (builds_per_lot)
};

/// One deviation: coordinate -> law -> times `scale` -> added to a parameter's value
/// deviation or, for a coefficient term, to its temperature coefficient.
struct Term {
  std::size_t coordinate;
  std::size_t entry;
  bool coefficient;
  Spread spread;
  double scale;  ///< |nominal| for relative value deviations, else 1
};

/// One parameter a variation covers.
struct Entry {
  std::size_t parameter;
  double nominal;
  double coefficient;         ///< nominal temperature coefficient
  bool relative_coefficient;  ///< coefficient per kelvin relative to the value, else absolute
  bool varies;                ///< has a random term or a coefficient
};

/// Per-thread scratch of one build; made by VariationModel::make_scratch.
struct BuildScratch {
  std::vector<double> x;            ///< the point after correlation
  std::vector<double> z;            ///< correlated normal scores before mixing
  std::vector<double> deviation;    ///< per entry, in the parameter's unit
  std::vector<double> coefficient;  ///< per entry
  double temperature = 0.0;         ///< the build's drawn temperature
};

class VariationModel {
 public:
  /// Resolves targets and correlations and checks them; throws DesignError naming the
  /// variation, the parameters or the pair of a correlation at fault.
  VariationModel(const Circuit& circuit, const std::vector<Variation>& variations,
                 const std::vector<Correlation>& correlations, const Temperature& temperature);

  std::size_t dimension() const { return coordinates_.size(); }
  const std::vector<Coordinate>& coordinates() const { return coordinates_; }
  const std::vector<Entry>& entries() const { return entries_; }
  const Temperature& temperature() const { return temperature_; }

  /// Evaluations per build: one per operating temperature, at least one.
  std::size_t evaluations() const {
    return temperature_.operating.empty() ? 1 : temperature_.operating.size();
  }

  BuildScratch make_scratch() const;

  /// Maps one point (dimension() native coordinates) to the build's deviations. `s` must
  /// come from this model's make_scratch: entries without a coefficient term keep the
  /// nominal coefficient it wrote. Allocates nothing.
  void prepare(const double* point, BuildScratch& s) const;

  /// Temperature of evaluation `q` of the prepared build.
  double temperature_of(const BuildScratch& s, std::size_t q) const {
    if (temperature_.drawn) return s.temperature;
    return temperature_.operating.empty() ? temperature_.reference : temperature_.operating[q];
  }

  /// Writes the covered parameters' values at `celsius` into theta (which holds the
  /// nominal values elsewhere). Allocates nothing.
  void apply(const BuildScratch& s, double celsius, double* theta) const;

  /// True when every covered parameter's value is nominal + one plain normal or uniform
  /// term, uncorrelated and without a temperature coefficient: the values then do not
  /// depend on the temperature and prepare_values() can map a point in one pass.
  bool maps_in_one_pass() const { return !value_normal_.empty() || !value_uniform_.empty(); }
  /// For a model that maps_in_one_pass(): prepare() and apply() in one pass over the terms
  /// for `count` builds, term by term across the builds. Point b is points[b * dimension()
  /// ...], its values go straight into theta + b * theta_stride (the deviations are not
  /// kept in scratch[b], only a drawn temperature). The same bits as prepare() then apply().
  void prepare_values(const double* points, std::size_t count, BuildScratch* scratch, double* theta,
                      std::size_t theta_stride) const;

 private:
  std::size_t add_coordinate(bool normal, std::string name);
  void set_correlations(const Circuit& circuit, const std::vector<Correlation>& correlations,
                        const std::vector<std::size_t>& part_coordinate);

  std::vector<Coordinate> coordinates_;
  std::vector<Term> terms_;
  std::vector<Entry> entries_;
  Temperature temperature_;
  std::size_t temperature_coordinate_ = static_cast<std::size_t>(-1);
  std::vector<std::size_t> correlated_;  ///< coordinates mixed by the Cholesky factor
  std::vector<double> cholesky_;         ///< lower factor, row-major, correlated_.size()^2

  // Per-sample fast paths, compiled once by plan_fast_paths(). They give the values of the
  // general loop bit for bit: the same operations in the same order per entry.
  void plan_fast_paths();
  /// An entry whose value has one term, a normal (uniform) law on a coordinate of the same
  /// kind: deviation = (spread * x) * scale (spread * (2x - 1) * scale), plus 0.0 as the
  /// general loop's sum from 0.0 has it.
  struct PlainTerm {
    std::size_t coordinate;
    std::size_t entry;
    double spread;
    double scale;
  };
  std::vector<PlainTerm> plain_normal_;
  std::vector<PlainTerm> plain_uniform_;
  /// The other terms, in their order, and how each converts its coordinate first.
  enum class Convert : unsigned char { none, to_uniform, to_normal };
  struct GeneralTerm {
    std::size_t term;  ///< index in terms_ (an index, so that copies of the model hold)
    Convert convert;
  };
  std::vector<GeneralTerm> general_;
  std::vector<std::size_t> summed_;        ///< entries whose deviation is not plain: reset to 0
  std::vector<std::size_t> coefficients_;  ///< entries with a coefficient term: reset to nominal
  /// apply(): entries with no coefficient (value = nominal + deviation at any temperature),
  /// and those with one, relative or absolute.
  struct Target {
    std::size_t parameter;
    std::size_t entry;
    double nominal;
  };
  std::vector<Target> constant_;
  std::vector<Target> relative_;
  std::vector<Target> absolute_;
  /// prepare_values(): the plain terms with their parameter and nominal value; empty
  /// unless the model maps in one pass.
  struct PlainValue {
    std::size_t coordinate;
    std::size_t parameter;
    double nominal;
    double spread;
    double scale;
  };
  std::vector<PlainValue> value_normal_;
  std::vector<PlainValue> value_uniform_;
};

}  // namespace lotwise::detail
