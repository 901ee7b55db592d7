#pragma once
// Memory sizes: the machine's physical memory, the default limit for big allocations, and sizes
// as users type them (512M, 4G, 1.5GiB, 100000).
#include <cstdint>
#include <string>

namespace covey {

std::uint64_t physical_memory_bytes();
// 80% of physical memory, or the size in the environment variable COVEY_MEMORY_LIMIT (e.g. a
// batch job's share of a node, "12G"): the default of every --memory-limit and of the checks
// before large reads. A malformed COVEY_MEMORY_LIMIT is an InputError naming it.
std::uint64_t default_memory_limit();
// Parses a size: a number with an optional binary suffix K, M, G or T (optionally followed by B or
// iB; case-insensitive; 1K = 1024). Throws InputError naming `option` when malformed.
std::uint64_t parse_memory_size(const std::string& text, const std::string& option);
// "1.50 GiB", "12.0 MiB", "512 B".
std::string format_bytes(double bytes);

// The check before a large allocation: throws ResourceError("WHAT needs about X, more than the
// memory limit of Y; SHRINK") when `bytes` exceeds `limit` (0: default_memory_limit()).
// `shrink` names the option that makes it smaller, e.g. "a smaller --draws shrinks it".
void require_memory(double bytes, std::uint64_t limit, const std::string& what,
                    const std::string& shrink);

// Bytes that `count` DAGs of n variables take in memory (one parent word per node each).
double dag_list_bytes(double count, int num_variables);
// The check before holding `count` draws of n variables (and the rows that write them): throws
// the ResourceError of require_memory naming `option` (e.g. "--draws") as what shrinks it.
void require_draws_memory(double count, int num_variables, const std::string& option,
                          std::uint64_t limit = 0);

}  // namespace covey
