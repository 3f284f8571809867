#pragma once
// Counts heap allocations and frees made on a thread while it is inside an
// allochook::Scope. The counting replacements of the global operator new and delete live
// in AllocationHook.cpp, which a program links to use this (as RealtimeTests.cpp does).
#include <atomic>

namespace kerf::allochook
{

inline thread_local bool counting = false;
inline std::atomic<long long> events{0};

/// Allocations and frees counted so far.
inline long long count() noexcept
{
    return events.load();
}

/// Counts what this thread allocates or frees while the scope lives.
class Scope
{
public:
    Scope() noexcept { counting = true; }
    ~Scope() { counting = false; }
    Scope(const Scope&) = delete;
    Scope& operator=(const Scope&) = delete;
};

} // namespace kerf::allochook
