#pragma once
/// \file axis_zone.hpp
/// Compatibility: the header moved to cylzone/evaluate/axis_zone.hpp when the library was grouped by stage.
#include "cylzone/evaluate/axis_zone.hpp"
