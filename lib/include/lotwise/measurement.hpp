#pragma once
// Named quantities computed for every build.
#include <string>
#include <vector>

namespace lotwise {

enum class MeasurementKind {
  gain,               ///< V(output) / V(input source), one input source
  differential_gain,  ///< output for inputs driven +1/2 and -1/2
  common_mode_gain,   ///< output for both inputs driven +1
  cmrr,               ///< 20 log10 |differential gain / common-mode gain|, dB
  /// DC output with the input signal removed (the inputs' difference, or the single
  /// input, set to zero; the common-mode level and all other sources kept), op-amp
  /// offsets and bias currents included, V
  output_offset,
  input_offset,       ///< output_offset divided by the signal gain, V
  node_voltage,       ///< DC voltage of the output at the operating point, V
  bandwidth,          ///< frequency where |gain| falls 3 dB below its DC value, Hz
  phase,              ///< phase of the gain at `frequency` (> 0), degrees in (-180, 180]
  gain_error,         ///< (gain - target) / target, relative; one or two inputs as for `phase`
  // Trip points of a deciding op-amp (`opamp`) driven by one voltage source (`inputs`).
  // Each threshold is the source value at which the op-amp's output leaves the limit it
  // held before the source reached it (docs/methods.md, "Trip points").
  rising_threshold,   ///< crossed by the source going up, V
  falling_threshold,  ///< crossed by the source going down, V
  hysteresis,         ///< rising_threshold - falling_threshold, V
  threshold_centre,   ///< (rising_threshold + falling_threshold) / 2, V
  output_high,        ///< the output with the op-amp at its high limit, V
  output_low,         ///< the output with the op-amp at its low limit, V
};

const char* to_string(MeasurementKind kind);
/// The measurement's unit as shown in reports ("V/V", "dB", "V", "Hz", "deg"; "" for a
/// relative gain error).
const char* unit_of(MeasurementKind kind);
/// True for the trip-point kinds (rising_threshold ... output_low).
bool is_trip_point(MeasurementKind kind);

struct Measurement {
  std::string name;
  MeasurementKind kind = MeasurementKind::gain;
  /// Driving sources: one for gain and bandwidth, two (plus, minus) for the
  /// differential kinds; none for node_voltage. Each names a voltage or current source.
  /// phase and gain_error take one or two, like gain and differential_gain; the trip-point
  /// kinds take the one voltage source that drives the decision.
  std::vector<std::string> inputs;
  /// Output node, or a pair (plus, minus) for a differential output. Thresholds take none;
  /// output_high / output_low default to the deciding op-amp's output node.
  std::vector<std::string> output;
  /// Frequency in Hz for the gain kinds; 0 means DC. At DC a gain keeps its sign;
  /// at a frequency it is the magnitude.
  double frequency = 0.0;
  /// gain_error: the intended gain (signed at DC, a magnitude at a frequency); not zero.
  double target = 0.0;
  /// Trip-point kinds: the deciding op-amp (an element with output limits).
  std::string opamp = {};
};

}  // namespace lotwise
