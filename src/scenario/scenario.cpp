#include "heraldry/scenario.hpp"
