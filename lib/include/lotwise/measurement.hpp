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
};

const char* to_string(MeasurementKind kind);
/// The measurement's unit as shown in reports ("V/V", "dB", "V", "Hz").
const char* unit_of(MeasurementKind kind);

struct Measurement {
  std::string name;
  MeasurementKind kind = MeasurementKind::gain;
  /// Driving sources: one for gain and bandwidth, two (plus, minus) for the
  /// differential kinds; none for node_voltage. Each names a voltage or current source.
  std::vector<std::string> inputs;
  /// Output node, or a pair (plus, minus) for a differential output.
  std::vector<std::string> output;
  /// Frequency in Hz for the gain kinds; 0 means DC. At DC a gain keeps its sign;
  /// at a frequency it is the magnitude.
  double frequency = 0.0;
};

}  // namespace lotwise
