#include "heraldry/link.hpp"
