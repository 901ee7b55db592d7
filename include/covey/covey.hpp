#pragma once
// Every public header of covey, lowest layer first (DEVELOPERS.md, "Layers").

#include "covey/core/atomic_file.hpp"
#include "covey/core/enum_names.hpp"
#include "covey/core/error.hpp"
#include "covey/core/logmath.hpp"
#include "covey/core/memory.hpp"
#include "covey/core/proportion.hpp"
#include "covey/core/random.hpp"

#include "covey/data/data.hpp"
#include "covey/data/edge_constraints.hpp"
#include "covey/data/variables.hpp"

#include "covey/scores/score_io.hpp"
#include "covey/scores/score_table.hpp"
#include "covey/scores/scores.hpp"

#include "covey/graph/cover_class.hpp"
#include "covey/graph/dag.hpp"
#include "covey/graph/draws_file.hpp"
#include "covey/graph/enumerate.hpp"
#include "covey/graph/features.hpp"

#include "covey/exact/cover_best.hpp"
#include "covey/exact/cover_draws.hpp"
#include "covey/exact/cover_sampler.hpp"
#include "covey/exact/exact_posterior.hpp"

#include "covey/diagnostics/diagnostics.hpp"
#include "covey/diagnostics/draws_csv.hpp"

#include "covey/chains/chain_run_file.hpp"
#include "covey/chains/chain_runner.hpp"
#include "covey/chains/chain_support.hpp"
#include "covey/chains/structure_chain.hpp"

#include "covey/analysis/check.hpp"
#include "covey/analysis/export.hpp"
#include "covey/analysis/posterior_compare.hpp"
#include "covey/analysis/run_diagnostics.hpp"

#include "covey/core/version.hpp"
#include "covey/report/consensus_graph.hpp"
#include "covey/report/plot.hpp"
#include "covey/report/report.hpp"
#include "covey/report/run_report.hpp"
