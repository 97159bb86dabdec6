#pragma once
// Runs produce(i) for i = 0..count-1 on several worker threads and consume(i, result) on the
// calling thread in index order. Workers never run more than `window` items ahead of the
// consumer, so memory stays bounded however large `count` is, and the consumer's output does not
// depend on the thread count. The first exception (from either side) stops the run and is
// rethrown after all workers have joined.

#include <condition_variable>
#include <exception>
#include <map>
#include <mutex>
#include <thread>
#include <utility>
#include <vector>

namespace frugal {

template <class Result, class Produce, class Consume>
void run_ordered(int count, int threads, Produce produce, Consume consume) {
  std::mutex mutex;
  std::condition_variable changed;
  std::map<int, Result> ready;
  int next_task = 0, next_consumed = 0;
  std::exception_ptr failure;
  const int window = 4 * threads;

  const auto work = [&] {
    while (true) {
      int n = 0;
      {
        std::unique_lock<std::mutex> lock(mutex);
        changed.wait(lock, [&] { return failure || next_task >= count || next_task - next_consumed < window; });
        if (failure || next_task >= count) return;
        n = next_task++;
      }
      try {
        Result result = produce(n);
        std::lock_guard<std::mutex> lock(mutex);
        ready.emplace(n, std::move(result));
      } catch (...) {
        std::lock_guard<std::mutex> lock(mutex);
        if (!failure) failure = std::current_exception();
      }
      changed.notify_all();
    }
  };

  std::vector<std::thread> workers;
  workers.reserve(static_cast<std::size_t>(threads));
  for (int t = 0; t < threads; ++t) workers.emplace_back(work);
  try {
    while (next_consumed < count) {
      Result result;
      {
        std::unique_lock<std::mutex> lock(mutex);
        changed.wait(lock, [&] { return failure || ready.count(next_consumed) != 0; });
        if (failure) break;
        result = std::move(ready.at(next_consumed));
        ready.erase(next_consumed);
      }
      consume(next_consumed, std::move(result));
      {
        std::lock_guard<std::mutex> lock(mutex);
        ++next_consumed;
      }
      changed.notify_all();
    }
  } catch (...) {
    std::lock_guard<std::mutex> lock(mutex);
    if (!failure) failure = std::current_exception();
  }
  changed.notify_all();
  for (std::thread& worker : workers) worker.join();
  if (failure) std::rethrow_exception(failure);
}

}  // namespace frugal
