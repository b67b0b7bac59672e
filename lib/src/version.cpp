#include "lotwise/version.hpp"

namespace lotwise {
const char* version() { return LOTWISE_VERSION_STRING; }
}  // namespace lotwise
