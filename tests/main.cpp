// The doctest main, in its own rarely-changing translation unit.
#define DOCTEST_CONFIG_IMPLEMENT_WITH_MAIN
#include <doctest/doctest.h>
