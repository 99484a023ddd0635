#pragma once
/// \file units.hpp
/// Compatibility: the header moved to cylzone/core/units.hpp when the library was grouped by stage.
#include "cylzone/core/units.hpp"
