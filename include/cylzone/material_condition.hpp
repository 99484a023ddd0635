#pragma once
/// \file material_condition.hpp
/// Compatibility: the header moved to cylzone/evaluate/material_condition.hpp when the library was grouped by stage.
#include "cylzone/evaluate/material_condition.hpp"
