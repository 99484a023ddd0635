#pragma once
/// \file fit_element.hpp
/// Compatibility: the header moved to cylzone/fit/fit_element.hpp when the library was grouped by stage.
#include "cylzone/fit/fit_element.hpp"
