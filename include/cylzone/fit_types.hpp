#pragma once
/// \file fit_types.hpp
/// Compatibility: the header moved to cylzone/fit/fit_types.hpp when the library was grouped by stage.
#include "cylzone/fit/fit_types.hpp"
