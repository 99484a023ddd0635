#pragma once
/// \file bore_evaluation.hpp
/// Compatibility: the header moved to cylzone/evaluate/bore_evaluation.hpp when the library was grouped by stage.
#include "cylzone/evaluate/bore_evaluation.hpp"
