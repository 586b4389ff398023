// The cost model of a sweep's points: the Gaussian cutoff N of the bare link at the point's
// distance (bounded by max_cutoff), ~N^3.5 per step of the protocol. The run orders its points
// by it (most expensive first) and `heraldry check` scales it by timing representative points
// into an estimate of the run time (run::estimate).
#pragma once

#include <vector>

#include "heraldry/scenario.hpp"
#include "heraldry/sweep.hpp"
#include "sweep/executor.hpp"

namespace heraldry::run::detail {

/// The modelled cost of each job (arbitrary units; only ratios between points mean anything).
std::vector<double> job_costs(const scenario::Scenario& sc, const sweep::Plan& plan, const std::vector<sweep::Job>& jobs);

}  // namespace heraldry::run::detail
