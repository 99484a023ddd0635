#pragma once
/// \file read_points.hpp
/// Compatibility: the header moved to cylzone/io/read_points.hpp when the library was grouped by stage.
#include "cylzone/io/read_points.hpp"
