#pragma once
// Long runs from Python: the C++ work runs on a worker thread while the calling (Python)
// thread waits without the GIL, waking every few tens of milliseconds to pass on
// progress, to notice Ctrl-C (or a kernel interrupt) and a StopToken set by another
// thread. Either stops the run at the next chunk, and the run returns the chunks merged
// so far, marked incomplete; the caller learns why from the RunReport.
#include "bindings.hpp"

#include <atomic>
#include <chrono>
#include <cstdint>
#include <future>
#include <memory>
#include <utility>

namespace lotwise::python {

// A flag another thread sets to stop a run. Copies share the flag.
class StopToken {
 public:
  StopToken() : flag_(std::make_shared<std::atomic<bool>>(false)) {}
  void set() { flag_->store(true); }
  void clear() { flag_->store(false); }
  bool is_set() const { return flag_->load(); }

 private:
  std::shared_ptr<std::atomic<bool>> flag_;
};

// Why a run ended early, filled in by run_controlled.
struct RunReport {
  bool interrupted = false;  ///< KeyboardInterrupt (Ctrl-C, kernel interrupt)
  bool stopped = false;      ///< the StopToken was set
};

// How often the waiting thread wakes: well within the one second a stop may take.
constexpr std::chrono::milliseconds poll_interval{50};

// Runs body(options) on a worker thread, with options.stop and options.progress wired
// to the poll loop above. `progress` (None or a callable(done, total)) is called on this
// thread with the GIL held; an exception it raises stops the run and propagates.
// `body` must not touch Python objects: it runs without the GIL.
template <typename Body>
auto run_controlled(RunOptions& options, const py::object& progress, const StopToken* token,
                    RunReport* report, Body body) -> decltype(body(options)) {
  using Result = decltype(body(options));
  std::atomic<bool> stop{false};
  std::atomic<std::uint64_t> done{0};
  std::atomic<std::uint64_t> total{options.samples};
  options.stop = &stop;
  // Called on the run's worker threads, one at a time: only atomic stores, never Python.
  options.progress = [&done, &total](std::uint64_t d, std::uint64_t t) {
    total.store(t);
    done.store(d);
  };
  // Safe without the GIL: `options`, `stop`, `done` and `total` live in this frame, which
  // outlives the task because every path below waits for it, and the body touches no
  // Python object (the caller keeps the objects it reads alive until we return).
  auto check_token = [&] {
    if (token != nullptr && token->is_set() && !stop.load()) {
      stop.store(true);
      if (report != nullptr) report->stopped = true;
    }
  };
  check_token();  // a token set before the run stops it before its first chunk
  std::future<Result> task;
  {
    py::gil_scoped_release release;
    task = std::async(std::launch::async, [&body, &options] { return body(options); });
  }
  auto finish = [&] {
    stop.store(true);
    py::gil_scoped_release release;
    task.wait();
  };
  std::uint64_t reported = 0;
  for (;;) {
    bool ready = false;
    {
      py::gil_scoped_release release;
      ready = task.wait_for(poll_interval) == std::future_status::ready;
    }
    check_token();
    if (PyErr_CheckSignals() != 0) {
      if (PyErr_ExceptionMatches(PyExc_KeyboardInterrupt) && report != nullptr) {
        // Ctrl-C: stop the workers and return what is done; the caller warns.
        PyErr_Clear();
        stop.store(true);
        report->interrupted = true;
      } else {  // another signal handler raised: stop, then propagate
        py::error_already_set raised;
        finish();
        throw raised;
      }
    }
    const std::uint64_t now = done.load();
    if (!progress.is_none() && now != reported) {
      reported = now;
      try {
        progress(now, total.load());
      } catch (py::error_already_set& e) {
        // Ctrl-C while the callback ran is still Ctrl-C: return what is done.
        if (report != nullptr && e.matches(PyExc_KeyboardInterrupt)) {
          stop.store(true);
          report->interrupted = true;
        } else {
          finish();
          throw;
        }
      } catch (...) {
        finish();
        throw;
      }
    }
    if (ready) break;
  }
  return task.get();
}

}  // namespace lotwise::python
