#include <doctest/doctest.h>
#include "heraldry/gaussian.hpp"
TEST_CASE("placeholder") { CHECK(heraldry::gaussian::fidelity(heraldry::gaussian::StandardForm{}) == doctest::Approx(0.5)); }
