// The processes of an MPI launch (mpirun, srun) as the commands see them: rank, size and the few
// collectives they need. Without MPI in the build, or when not started by a launcher, a session of
// one process.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "orderband/process_share.hpp"

namespace orderband::cli {

class MpiSession {
 public:
  /// A session of one process.
  MpiSession() = default;
  /// Joins the launch when the build has MPI (ORDERBAND_MPI) and a launcher started this process
  /// (its rank variable is set: OMPI_COMM_WORLD_RANK, PMIX_RANK or PMI_RANK).
  MpiSession(int& argc, char**& argv);
  ~MpiSession();
  MpiSession(const MpiSession&) = delete;
  MpiSession& operator=(const MpiSession&) = delete;

  int rank() const { return rank_; }
  int size() const { return size_; }
  /// The largest of the processes' values, on every process (the exit status they all return).
  int max_over_processes(int value) const;
  /// Ends every process of the launch with `status` (a process failed where the others may be
  /// waiting for it).
  [[noreturn]] void abort(int status) const;
  /// The processes as the library sees them (all_gather over them, split into crews).
  ProcessShare process_share() const;

 private:
  [[maybe_unused]] bool joined_ = false;  ///< MPI initialised here (only read in a build with MPI)
  int rank_ = 0, size_ = 1;
};

/// The program's session (set up by main).
const MpiSession& mpi_session();
void set_mpi_session(const MpiSession* session);

}  // namespace orderband::cli
