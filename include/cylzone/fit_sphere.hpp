#pragma once
/// \file fit_sphere.hpp
/// Compatibility: the header moved to cylzone/fit/fit_sphere.hpp when the library was grouped by stage.
#include "cylzone/fit/fit_sphere.hpp"
