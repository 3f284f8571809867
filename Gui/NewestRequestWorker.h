#pragma once
// The background-thread plumbing the z-plane and impulse views share: one thread that works
// on the newest request only and keeps the newest result until the view takes it.
#include <chrono>
#include <condition_variable>
#include <cstdint>
#include <functional>
#include <mutex>
#include <optional>
#include <thread>
#include <utility>

namespace kerf
{

/// One worker thread. request() (message thread) numbers a request from 1 and replaces any
/// request the thread has not started; the thread computes it, keeps the result (replacing
/// one not yet taken) and calls `onResult` (on the worker thread: the views trigger their
/// AsyncUpdater there). take() hands over the newest result with its request's number;
/// waitFor() blocks until a given request's result is ready. The owner calls stop() first in
/// its destructor, so `compute` never runs on a half-destroyed owner.
template <typename Request, typename Result> class NewestRequestWorker
{
public:
    NewestRequestWorker(std::function<Result(const Request&)> compute,
                        std::function<void()> onResult)
        : work(std::move(compute)), notify(std::move(onResult))
    {
        thread = std::thread([this] { loop(); });
    }
    ~NewestRequestWorker() { stop(); }

    /// Ends and joins the thread (a computation under way finishes first). Idempotent.
    void stop()
    {
        {
            const std::lock_guard<std::mutex> lock(mutex);
            quitting = true;
        }
        workReady.notify_all();
        if (thread.joinable())
            thread.join();
    }

    /// Message thread: queues a request; returns its number.
    std::uint64_t request(Request r)
    {
        {
            const std::lock_guard<std::mutex> lock(mutex);
            pending.emplace(++lastId, std::move(r));
        }
        workReady.notify_one();
        return lastId;
    }
    /// Message thread: the number of the newest request (0 before the first).
    std::uint64_t lastRequest() const noexcept { return lastId; }

    /// Takes the newest finished result and its request's number, if there is one.
    std::optional<std::pair<std::uint64_t, Result>> take()
    {
        std::optional<std::pair<std::uint64_t, Result>> r;
        const std::lock_guard<std::mutex> lock(mutex);
        r.swap(finished);
        return r;
    }

    /// Waits until the result of request `id` is finished (and not yet taken). False on
    /// timeout.
    bool waitFor(std::uint64_t id, int timeoutMs)
    {
        std::unique_lock<std::mutex> lock(mutex);
        return resultReady.wait_for(lock, std::chrono::milliseconds(timeoutMs),
                                    [&] { return finished && finished->first == id; });
    }

private:
    void loop()
    {
        for (;;)
        {
            std::optional<std::pair<std::uint64_t, Request>> job;
            {
                std::unique_lock<std::mutex> lock(mutex);
                workReady.wait(lock, [this] { return quitting || pending.has_value(); });
                if (quitting)
                    return;
                job.swap(pending);
            }
            auto result = work(job->second);
            {
                const std::lock_guard<std::mutex> lock(mutex);
                finished.emplace(job->first, std::move(result));
            }
            resultReady.notify_all();
            notify();
        }
    }

    std::function<Result(const Request&)> work;
    std::function<void()> notify;
    std::mutex mutex;
    std::condition_variable workReady, resultReady;
    std::optional<std::pair<std::uint64_t, Request>> pending; // under mutex
    std::optional<std::pair<std::uint64_t, Result>> finished; // under mutex
    std::uint64_t lastId = 0;                                 // message thread
    bool quitting = false;                                    // under mutex
    std::thread thread; // started in the constructor's body, joined by stop()
};

} // namespace kerf
