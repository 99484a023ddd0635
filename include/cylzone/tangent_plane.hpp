#pragma once
/// \file tangent_plane.hpp
/// Compatibility: the header moved to cylzone/datum/tangent_plane.hpp when the library was grouped by stage.
#include "cylzone/datum/tangent_plane.hpp"
