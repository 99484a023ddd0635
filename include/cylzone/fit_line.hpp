#pragma once
/// \file fit_line.hpp
/// Compatibility: the header moved to cylzone/fit/fit_line.hpp when the library was grouped by stage.
#include "cylzone/fit/fit_line.hpp"
