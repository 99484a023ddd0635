#pragma once
/// \file tolerance_types.hpp
/// Compatibility: the header moved to cylzone/plan/tolerance_types.hpp when the library was grouped by stage.
#include "cylzone/plan/tolerance_types.hpp"
