#pragma once
// Private: the lane solver's fill of one matrix slot, compiled from the pattern's terms.
#include <cstdint>

namespace lotwise::detail {

/// One term of a slot's fill, replayed per lane: the slot's value += factor * source
/// (times j f for the imaginary kinds).
struct SlotTerm {
  enum Kind : unsigned char { real_reciprocal, real_value, imag_value, imag_reciprocal } kind;
  std::uint32_t index;  ///< into the reciprocal lanes (reciprocal kinds) or theta
  double factor;
};

/// Whether a term of this kind reads the parameter's reciprocal.
inline bool reads_reciprocal(SlotTerm::Kind kind) {
  return kind == SlotTerm::real_reciprocal || kind == SlotTerm::imag_reciprocal;
}

/// A slot set back before each factorisation: its start value plus its terms.
struct SlotFill {
  std::uint32_t slot;
  std::uint32_t begin, end;  ///< its terms in the term list (none: set only)
};

}  // namespace lotwise::detail
