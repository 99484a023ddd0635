#pragma once
/// \file part_check.hpp
/// Compatibility: the header moved to cylzone/check/part_check.hpp when the library was grouped by stage.
#include "cylzone/check/part_check.hpp"
