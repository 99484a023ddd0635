#pragma once
/// \file errors.hpp
/// Compatibility: the header moved to cylzone/core/errors.hpp when the library was grouped by stage.
#include "cylzone/core/errors.hpp"
