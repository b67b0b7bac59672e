// Catch2's main for lotwise_variation_tests.
#define CATCH_CONFIG_MAIN
#include <catch2/catch.hpp>
