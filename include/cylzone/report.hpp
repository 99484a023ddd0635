#pragma once
/// \file report.hpp
/// Compatibility: the header moved to cylzone/report/report.hpp when the library was grouped by stage.
#include "cylzone/report/report.hpp"
