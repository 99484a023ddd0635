#pragma once
/// \file sections.hpp
/// Compatibility: the header moved to cylzone/fit/sections.hpp when the library was grouped by stage.
#include "cylzone/fit/sections.hpp"
