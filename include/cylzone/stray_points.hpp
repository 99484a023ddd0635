#pragma once
/// \file stray_points.hpp
/// Compatibility: the header moved to cylzone/prepare/stray_points.hpp when the library was grouped by stage.
#include "cylzone/prepare/stray_points.hpp"
