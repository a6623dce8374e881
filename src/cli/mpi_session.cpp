// The processes of an MPI launch.
#include "mpi_session.hpp"

#include <climits>
#include <cstdlib>

#include "orderband/error.hpp"

#ifdef ORDERBAND_WITH_MPI
#include <mpi.h>
#endif

namespace orderband::cli {

namespace {

const MpiSession* g_session = nullptr;

#ifdef ORDERBAND_WITH_MPI
bool started_by_a_launcher() {
  for (const char* name : {"OMPI_COMM_WORLD_RANK", "PMIX_RANK", "PMI_RANK"})
    if (const char* v = std::getenv(name); v && *v) return true;
  return false;
}

/// Every process's bytes of the communicator, in rank order, on every one of them.
std::vector<std::vector<uint8_t>> all_gather_on(MPI_Comm comm, const std::vector<uint8_t>& mine) {
  int size = 1;
  MPI_Comm_size(comm, &size);
  if (mine.size() > static_cast<size_t>(INT_MAX)) fail("a process's share of results exceeds 2 GB");
  const int length = static_cast<int>(mine.size());
  std::vector<int> lengths(static_cast<size_t>(size)), offsets(lengths.size(), 0);
  MPI_Allgather(&length, 1, MPI_INT, lengths.data(), 1, MPI_INT, comm);
  long long total = 0;
  for (size_t r = 0; r < lengths.size(); ++r) offsets[r] = static_cast<int>(total), total += lengths[r];
  if (total > INT_MAX) fail("the processes' results together exceed 2 GB");
  std::vector<uint8_t> all(static_cast<size_t>(total));
  MPI_Allgatherv(mine.data(), length, MPI_BYTE, all.data(), lengths.data(), offsets.data(), MPI_BYTE, comm);
  std::vector<std::vector<uint8_t>> out;
  for (size_t r = 0; r < lengths.size(); ++r) {
    const auto begin = all.begin() + offsets[r];
    out.emplace_back(begin, begin + lengths[r]);
  }
  return out;
}

/// The processes of a communicator as the library sees them; a crew is a communicator split off
/// it (freed by MPI_Finalize).
ProcessShare share_of(MPI_Comm comm) {
  ProcessShare share;
  MPI_Comm_rank(comm, &share.rank);
  MPI_Comm_size(comm, &share.processes);
  if (share.processes == 1) return share;
  share.all_gather = [comm](const std::vector<uint8_t>& mine) { return all_gather_on(comm, mine); };
  share.split = [comm, rank = share.rank](int crew) {
    MPI_Comm sub = MPI_COMM_NULL;
    if (MPI_Comm_split(comm, crew, rank, &sub) != MPI_SUCCESS) fail("the processes could not be split into crews");
    return share_of(sub);
  };
  return share;
}
#endif

}  // namespace

MpiSession::MpiSession([[maybe_unused]] int& argc, [[maybe_unused]] char**& argv) {
#ifdef ORDERBAND_WITH_MPI
  if (!started_by_a_launcher()) return;
  // Only the main thread calls MPI; the OpenMP threads of each process compute.
  int provided = 0;
  if (MPI_Init_thread(&argc, &argv, MPI_THREAD_FUNNELED, &provided) != MPI_SUCCESS)
    fail("MPI could not be initialised");
  joined_ = true;
  MPI_Comm_rank(MPI_COMM_WORLD, &rank_);
  MPI_Comm_size(MPI_COMM_WORLD, &size_);
#endif
}

MpiSession::~MpiSession() {
#ifdef ORDERBAND_WITH_MPI
  if (joined_) MPI_Finalize();
#endif
}

int MpiSession::max_over_processes(int value) const {
#ifdef ORDERBAND_WITH_MPI
  if (joined_) {
    int out = value;
    MPI_Allreduce(&value, &out, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
    return out;
  }
#endif
  return value;
}

void MpiSession::abort(int status) const {
#ifdef ORDERBAND_WITH_MPI
  if (joined_) MPI_Abort(MPI_COMM_WORLD, status);
#endif
  std::exit(status);
}

ProcessShare MpiSession::process_share() const {
#ifdef ORDERBAND_WITH_MPI
  if (joined_) return share_of(MPI_COMM_WORLD);
#endif
  return {};
}

const MpiSession& mpi_session() {
  static const MpiSession alone;
  return g_session ? *g_session : alone;
}

void set_mpi_session(const MpiSession* session) { g_session = session; }

}  // namespace orderband::cli
