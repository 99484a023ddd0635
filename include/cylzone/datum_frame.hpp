#pragma once
/// \file datum_frame.hpp
/// Compatibility: the header moved to cylzone/datum/datum_frame.hpp when the library was grouped by stage.
#include "cylzone/datum/datum_frame.hpp"
