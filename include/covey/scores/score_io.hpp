#pragma once
// Reading and writing score tables: covey's HDF5 layout (docs/file-formats.md) and the
// plain-text TSV format for users who bring their own local scores.
#include <string>

#include "covey/scores/score_table.hpp"

namespace covey {

// Writers are atomic and refuse an existing `path` unless `overwrite` (the CLI's --force):
// OptionError naming the file (require_new_output).
void write_scores_hdf5(const ScoreTable& table, const std::string& path, bool overwrite = false);
ScoreTable read_scores_hdf5(const std::string& path);

// TSV: line 1 `variables<TAB>name...`, line 2 `node<TAB>parents<TAB>log_score`, then one row
// per allowed (node, parent set) with parents joined by ','. '#' lines and blank lines ignored.
ScoreTable read_scores_tsv(const std::string& path);
void write_scores_tsv(const ScoreTable& table, const std::string& path, bool overwrite = false);

// Any score table a command accepts: `.tsv` (or `.txt`) as TSV, anything else as HDF5; a table
// of fewer than two variables is refused (InputError).
ScoreTable load_scores(const std::string& path);
// Writes by the same rule: `.tsv` (or `.txt`) as TSV, anything else as HDF5 (atomic; an
// existing file only with `overwrite`).
void save_scores(const ScoreTable& table, const std::string& path, bool overwrite = false);

}  // namespace covey
