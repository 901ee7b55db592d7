#pragma once
// The fixed run options as the JSON text of the run file's `options` attribute
// (docs/file-formats.md, "Chain runs"). Private to the chains layer: public headers carry no
// JSON type.
#include <nlohmann/json.hpp>
#include <string>

#include "covey/chains/chain_options.hpp"

namespace covey {

nlohmann::json fixed_options_to_json(const ChainRunOptions& options);
// The fixed options stored in a run file (the session options keep their defaults); InputError
// naming `path` when the record is corrupt.
ChainRunOptions fixed_options_from_json(const nlohmann::json& stored, const std::string& path);

}  // namespace covey
