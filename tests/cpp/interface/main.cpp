// Catch2's own main for the interface tests.
#define CATCH_CONFIG_MAIN
#include <catch2/catch.hpp>
