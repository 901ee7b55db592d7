#pragma once
// Memory sizes: the machine's physical memory, the default limit for big allocations, and sizes
// as users type them (512M, 4G, 1.5GiB, 100000).
#include <cstdint>
#include <string>

namespace covey {

std::uint64_t physical_memory_bytes();
// 80% of physical memory: the default of every --memory-limit.
std::uint64_t default_memory_limit();
// Parses a size: a number with an optional binary suffix K, M, G or T (optionally followed by B or
// iB; case-insensitive; 1K = 1024). Throws InputError naming `option` when malformed.
std::uint64_t parse_memory_size(const std::string& text, const std::string& option);
// "1.50 GiB", "12.0 MiB", "512 B".
std::string format_bytes(double bytes);

}  // namespace covey
