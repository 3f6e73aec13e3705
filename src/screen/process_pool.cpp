#include "screen/process_pool.hpp"

#include <fcntl.h>
#include <fmt/format.h>
#include <poll.h>
#include <sched.h>
#include <signal.h>
#include <sys/prctl.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <exception>
#include <new>

#include "core/error.hpp"

namespace overtone {

namespace {

using Clock = std::chrono::steady_clock;

// Frames on the pipe: one type byte, the payload length (8 bytes, host order; both ends
// are the same program on the same machine), the payload.
constexpr char frame_stage = 'S';
constexpr char frame_result = 'R';
constexpr char frame_error = 'E';
constexpr std::size_t frame_header_size = 1 + sizeof(std::uint64_t);
constexpr std::size_t read_chunk_size = 1 << 16;

void write_all(int fd, const char* data, std::size_t size) {
  while (size > 0) {
    const ssize_t written = ::write(fd, data, size);
    if (written < 0) {
      if (errno == EINTR) continue;
      _exit(3);  // the parent is gone or the pipe broke: nothing left to report to
    }
    data += written;
    size -= static_cast<std::size_t>(written);
  }
}

void write_frame(int fd, char type, const std::string& payload) {
  char header[frame_header_size];
  header[0] = type;
  const std::uint64_t length = payload.size();
  std::memcpy(header + 1, &length, sizeof length);
  write_all(fd, header, sizeof header);
  write_all(fd, payload.data(), payload.size());
}

constexpr double bytes_per_mib = 1024.0 * 1024.0;

[[noreturn]] void run_child(int fd, pid_t parent, double memory_limit_mb, const ChildWork& work) {
  // Die with the parent: a screen killed with SIGKILL must not leave children computing.
  prctl(PR_SET_PDEATHSIG, SIGKILL);
  if (getppid() != parent) _exit(4);
  // The child's output would land in the middle of the progress display.
  const int null_fd = ::open("/dev/null", O_RDWR);
  if (null_fd >= 0) {
    dup2(null_fd, STDIN_FILENO);
    dup2(null_fd, STDOUT_FILENO);
    dup2(null_fd, STDERR_FILENO);
    if (null_fd > STDERR_FILENO) ::close(null_fd);
  }
  signal(SIGPIPE, SIG_DFL);
  if (memory_limit_mb > 0.0) {
    const auto bytes = static_cast<rlim_t>(memory_limit_mb * bytes_per_mib);
    const rlimit limit{bytes, bytes};
    setrlimit(RLIMIT_AS, &limit);
  }
  try {
    const std::string result = work([fd](const std::string& stage) { write_frame(fd, frame_stage, stage); });
    write_frame(fd, frame_result, result);
  } catch (const std::bad_alloc&) {
    write_frame(fd, frame_error, "out of memory (the worker's memory limit was reached)");
  } catch (const std::exception& error) {
    write_frame(fd, frame_error, error.what());
  } catch (...) {
    write_frame(fd, frame_error, "unknown exception");
  }
  ::close(fd);
  _exit(0);
}

std::string signal_text(int signal_number) {
  const char* name = strsignal(signal_number);
  return fmt::format("signal {} ({})", signal_number, name ? name : "unknown");
}

struct Child {
  std::size_t task = 0;
  pid_t pid = -1;
  int fd = -1;
  Clock::time_point started;
  std::string buffer;
  std::string last_stage;
  bool has_result = false;
  bool has_error = false;
  std::string result;
  std::string error;
  bool eof = false;
};

// Takes every complete frame off the front of the buffer.
void parse_frames(Child& child) {
  std::size_t at = 0;
  while (child.buffer.size() - at >= frame_header_size) {
    std::uint64_t length = 0;
    std::memcpy(&length, child.buffer.data() + at + 1, sizeof length);
    if (child.buffer.size() - at - frame_header_size < length) break;
    const char type = child.buffer[at];
    std::string payload = child.buffer.substr(at + frame_header_size, length);
    if (type == frame_stage) {
      child.last_stage = std::move(payload);
    } else if (type == frame_result) {
      child.has_result = true;
      child.result = std::move(payload);
    } else if (type == frame_error) {
      child.has_error = true;
      child.error = std::move(payload);
    }
    at += frame_header_size + length;
  }
  child.buffer.erase(0, at);
}

// Reads what is there without blocking; marks end of file.
void drain(Child& child) {
  char chunk[read_chunk_size];
  for (;;) {
    const ssize_t got = ::read(child.fd, chunk, sizeof chunk);
    if (got > 0) {
      child.buffer.append(chunk, static_cast<std::size_t>(got));
      continue;
    }
    if (got == 0) child.eof = true;
    if (got < 0 && errno == EINTR) continue;
    break;  // EAGAIN: nothing more for now
  }
  parse_frames(child);
}

int wait_for(pid_t pid) {
  int status = 0;
  while (waitpid(pid, &status, 0) < 0 && errno == EINTR) {
  }
  return status;
}

}  // namespace

struct ProcessPool::Impl {
  int slots = 1;
  double timeout_s = 0.0;
  double memory_limit_mb = 0.0;
  std::vector<Child> children;

  FinishedChild finish(Child& child, bool timed_out) {
    FinishedChild finished;
    finished.task = child.task;
    finished.last_stage = child.last_stage;
    finished.seconds = std::chrono::duration<double>(Clock::now() - child.started).count();
    if (timed_out) {
      kill(child.pid, SIGKILL);
      wait_for(child.pid);
      finished.ending = ChildEnding::timed_out;
      finished.detail = fmt::format("exceeded the time limit of {:g} s", timeout_s);
    } else {
      const int status = wait_for(child.pid);
      if (child.has_result && WIFEXITED(status) && WEXITSTATUS(status) == 0) {
        finished.ending = ChildEnding::completed;
        finished.result = std::move(child.result);
      } else if (child.has_error && WIFEXITED(status) && WEXITSTATUS(status) == 0) {
        finished.ending = ChildEnding::failed;
        finished.detail = child.error;
      } else {
        finished.ending = ChildEnding::crashed;
        if (WIFSIGNALED(status))
          finished.detail = "the worker process was ended by " + signal_text(WTERMSIG(status));
        else
          finished.detail = fmt::format("the worker process ended without a result (exit status {})",
                                        WIFEXITED(status) ? WEXITSTATUS(status) : -1);
      }
    }
    ::close(child.fd);
    child.fd = -1;
    return finished;
  }
};

ProcessPool::ProcessPool(int slots, double timeout_s, double memory_limit_mb)
    : impl_(std::make_unique<Impl>()) {
  if (slots < 1) throw Error(fmt::format("a process pool needs at least one slot, got {}", slots));
  if (!(timeout_s >= 0.0))
    throw Error(fmt::format("the time limit must be 0 (none) or positive, got {}", timeout_s));
  if (!(memory_limit_mb >= 0.0))
    throw Error(fmt::format("the memory limit must be 0 (none) or positive, got {}", memory_limit_mb));
  impl_->slots = slots;
  impl_->timeout_s = timeout_s;
  impl_->memory_limit_mb = memory_limit_mb;
}

ProcessPool::~ProcessPool() {
  for (Child& child : impl_->children) {
    kill(child.pid, SIGKILL);
    wait_for(child.pid);
    if (child.fd >= 0) ::close(child.fd);
  }
}

int ProcessPool::slots() const { return impl_->slots; }
std::size_t ProcessPool::running() const { return impl_->children.size(); }

void ProcessPool::start(std::size_t task, const ChildWork& work) {
  if (!has_free_slot()) throw Error("no free slot in the process pool");
  int fds[2];
  if (pipe2(fds, O_CLOEXEC) != 0) throw Error(std::string("cannot create a pipe: ") + std::strerror(errno));
  const pid_t parent = getpid();
  const pid_t pid = fork();
  if (pid < 0) {
    ::close(fds[0]);
    ::close(fds[1]);
    throw Error(std::string("cannot start a worker process: ") + std::strerror(errno));
  }
  if (pid == 0) {
    ::close(fds[0]);
    for (const Child& other : impl_->children) ::close(other.fd);
    run_child(fds[1], parent, impl_->memory_limit_mb, work);
  }
  ::close(fds[1]);
  fcntl(fds[0], F_SETFL, fcntl(fds[0], F_GETFL) | O_NONBLOCK);
  Child child;
  child.task = task;
  child.pid = pid;
  child.fd = fds[0];
  child.started = Clock::now();
  impl_->children.push_back(std::move(child));
}

std::vector<FinishedChild> ProcessPool::wait(double max_wait_s) {
  std::vector<FinishedChild> finished;
  std::vector<Child>& children = impl_->children;
  if (children.empty()) return finished;
  const auto now = Clock::now();
  double wait_s = std::max(0.0, max_wait_s);
  if (impl_->timeout_s > 0.0)
    for (const Child& child : children) {
      const double left = impl_->timeout_s - std::chrono::duration<double>(now - child.started).count();
      wait_s = std::min(wait_s, std::max(0.0, left));
    }
  std::vector<pollfd> fds;
  for (const Child& child : children) fds.push_back({child.fd, POLLIN, 0});
  const int timeout_ms = static_cast<int>(std::ceil(wait_s * 1000.0));
  const int ready = poll(fds.data(), fds.size(), timeout_ms);
  if (ready < 0 && errno != EINTR)
    throw Error(std::string("waiting for worker processes failed: ") + std::strerror(errno));
  for (std::size_t i = 0; i < children.size(); ++i)
    if (ready > 0 && (fds[i].revents & (POLLIN | POLLHUP | POLLERR))) drain(children[i]);
  const auto after = Clock::now();
  for (std::size_t i = 0; i < children.size();) {
    Child& child = children[i];
    const bool over_time = impl_->timeout_s > 0.0 &&
                           std::chrono::duration<double>(after - child.started).count() >= impl_->timeout_s;
    if (child.eof || (over_time && !child.has_result)) {
      finished.push_back(impl_->finish(child, !child.eof));
      children.erase(children.begin() + static_cast<std::ptrdiff_t>(i));
    } else {
      ++i;
    }
  }
  return finished;
}

int available_processors() {
  cpu_set_t set;
  CPU_ZERO(&set);
  if (sched_getaffinity(0, sizeof set, &set) == 0) return std::max(1, CPU_COUNT(&set));
  const long online = sysconf(_SC_NPROCESSORS_ONLN);
  return online > 0 ? static_cast<int>(online) : 1;
}

}  // namespace overtone
