#pragma once
/// \file fit_plane.hpp
/// Compatibility: the header moved to cylzone/fit/fit_plane.hpp when the library was grouped by stage.
#include "cylzone/fit/fit_plane.hpp"
