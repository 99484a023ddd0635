#pragma once
/// \file datum_mobility.hpp
/// Compatibility: the header moved to cylzone/evaluate/datum_mobility.hpp when the library was grouped by stage.
#include "cylzone/evaluate/datum_mobility.hpp"
