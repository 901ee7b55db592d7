#pragma once
// The one module that talks to MPI (docs/cluster.md). Everything else calls these functions,
// which compile to a single-rank fallback when covey is built without MPI (COVEY_WITH_MPI
// undefined) or when the process was not started by an MPI launcher: then rank() is 0, size()
// is 1 and the collectives return their input unchanged, so every code path is the same.
//
// MPI is initialised only when the launcher's environment says the process is one of several
// ranks (OMPI_COMM_WORLD_SIZE, PMIX_RANK, PMI_SIZE); a plain `covey chain ...` never touches MPI.
// Only the main thread calls MPI (MPI_THREAD_FUNNELED); the TBB threads of a rank never do.
#include <cstdint>
#include <string>
#include <vector>

namespace covey::mpi {

// True when this binary was built against MPI.
bool built_with_mpi();

// Initialises MPI for its lifetime when started by a launcher (see above) and finalises it at
// the end. At most one Session exists at a time.
class Session {
 public:
  Session();
  ~Session();
  Session(const Session&) = delete;
  Session& operator=(const Session&) = delete;

 private:
  bool initialised_ = false;
};

int rank();  // 0 without a session
int size();  // 1 without a session

// In-place collectives over all ranks (no-ops with one rank).
void allreduce_max(std::vector<double>& values);
void allreduce_sum(std::vector<std::uint64_t>& values);
void broadcast(std::vector<double>& values, int root = 0);
void barrier();

// Ends every rank of the job with this exit code (plain std::exit with one rank). A rank that
// hits an error calls this so that the other ranks do not wait forever in a collective.
[[noreturn]] void abort(int code);

}  // namespace covey::mpi
