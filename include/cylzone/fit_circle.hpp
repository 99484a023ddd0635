#pragma once
/// \file fit_circle.hpp
/// Compatibility: the header moved to cylzone/fit/fit_circle.hpp when the library was grouped by stage.
#include "cylzone/fit/fit_circle.hpp"
