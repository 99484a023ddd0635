#pragma once
/// \file fit_cylinder.hpp
/// Compatibility: the header moved to cylzone/fit/fit_cylinder.hpp when the library was grouped by stage.
#include "cylzone/fit/fit_cylinder.hpp"
