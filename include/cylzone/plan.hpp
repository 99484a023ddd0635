#pragma once
/// \file plan.hpp
/// Compatibility: the header moved to cylzone/plan/plan.hpp when the library was grouped by stage.
#include "cylzone/plan/plan.hpp"
