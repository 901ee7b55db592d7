#include "core/mpi_context.hpp"

#include <cstdlib>

#include "covey/core/error.hpp"

#ifdef COVEY_WITH_MPI
// The C interface only (OpenMPI's mpi.h otherwise pulls in its deprecated C++ bindings).
#define OMPI_SKIP_MPICXX 1
#define MPICH_SKIP_MPICXX 1
#include <mpi.h>
#endif

namespace covey::mpi {
namespace {

int g_rank = 0;
int g_size = 1;
[[maybe_unused]] bool g_active = false;

[[maybe_unused]] bool started_by_launcher() {
  for (const char* name : {"OMPI_COMM_WORLD_SIZE", "PMIX_RANK", "PMI_SIZE", "PMI_RANK"})
    if (std::getenv(name)) return true;
  return false;
}

}  // namespace

bool built_with_mpi() {
#ifdef COVEY_WITH_MPI
  return true;
#else
  return false;
#endif
}

Session::Session() {
#ifdef COVEY_WITH_MPI
  if (g_active) throw Error("mpi::Session: MPI is already initialised");
  if (!started_by_launcher()) return;
  int provided = 0;
  if (MPI_Init_thread(nullptr, nullptr, MPI_THREAD_FUNNELED, &provided) != MPI_SUCCESS)
    throw Error("MPI_Init_thread failed");
  MPI_Comm_rank(MPI_COMM_WORLD, &g_rank);
  MPI_Comm_size(MPI_COMM_WORLD, &g_size);
  g_active = true;
  initialised_ = true;
#endif
}

Session::~Session() {
#ifdef COVEY_WITH_MPI
  if (!initialised_) return;
  MPI_Finalize();
  g_active = false;
  g_rank = 0;
  g_size = 1;
#else
  (void)initialised_;
#endif
}

int rank() {
  return g_rank;
}

int size() {
  return g_size;
}

void allreduce_max(std::vector<double>& values) {
  if (g_size == 1 || values.empty()) return;
#ifdef COVEY_WITH_MPI
  MPI_Allreduce(MPI_IN_PLACE, values.data(), static_cast<int>(values.size()), MPI_DOUBLE, MPI_MAX,
                MPI_COMM_WORLD);
#endif
}

void allreduce_sum(std::vector<std::uint64_t>& values) {
  if (g_size == 1 || values.empty()) return;
#ifdef COVEY_WITH_MPI
  MPI_Allreduce(MPI_IN_PLACE, values.data(), static_cast<int>(values.size()), MPI_UINT64_T, MPI_SUM,
                MPI_COMM_WORLD);
#endif
}

void broadcast(std::vector<double>& values, int root) {
  if (g_size == 1 || values.empty()) return;
#ifdef COVEY_WITH_MPI
  MPI_Bcast(values.data(), static_cast<int>(values.size()), MPI_DOUBLE, root, MPI_COMM_WORLD);
#else
  (void)root;
#endif
}

void barrier() {
  if (g_size == 1) return;
#ifdef COVEY_WITH_MPI
  MPI_Barrier(MPI_COMM_WORLD);
#endif
}

void abort(int code) {
#ifdef COVEY_WITH_MPI
  if (g_active && g_size > 1) MPI_Abort(MPI_COMM_WORLD, code);
#endif
  std::exit(code);
}

}  // namespace covey::mpi
