#pragma once
/// \file point_cloud.hpp
/// Compatibility: the header moved to cylzone/io/point_cloud.hpp when the library was grouped by stage.
#include "cylzone/io/point_cloud.hpp"
