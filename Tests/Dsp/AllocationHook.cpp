// Global operator new and delete replaced by counting versions (AllocationHook.h): while the
// calling thread is inside an allochook::Scope every allocation and free is counted.
#include "AllocationHook.h"

#include <cstdlib>
#include <new>

namespace
{
void* countedAlloc(std::size_t n)
{
    if (kerf::allochook::counting)
        kerf::allochook::events.fetch_add(1);
    if (void* p = std::malloc(n == 0 ? 1 : n))
        return p;
    throw std::bad_alloc();
}

void countedFree(void* p) noexcept
{
    if (kerf::allochook::counting && p != nullptr)
        kerf::allochook::events.fetch_add(1);
    std::free(p);
}
} // namespace

void* operator new(std::size_t n)
{
    return countedAlloc(n);
}
void* operator new[](std::size_t n)
{
    return countedAlloc(n);
}
void operator delete(void* p) noexcept
{
    countedFree(p);
}
void operator delete[](void* p) noexcept
{
    countedFree(p);
}
void operator delete(void* p, std::size_t) noexcept
{
    countedFree(p);
}
void operator delete[](void* p, std::size_t) noexcept
{
    countedFree(p);
}
void* operator new(std::size_t n, std::align_val_t a)
{
    if (kerf::allochook::counting)
        kerf::allochook::events.fetch_add(1);
    const auto al = static_cast<std::size_t>(a);
    if (void* p = std::aligned_alloc(al, (n + al - 1) / al * al))
        return p;
    throw std::bad_alloc();
}
void* operator new[](std::size_t n, std::align_val_t a)
{
    return operator new(n, a);
}
void operator delete(void* p, std::align_val_t) noexcept
{
    countedFree(p);
}
void operator delete[](void* p, std::align_val_t) noexcept
{
    countedFree(p);
}
void operator delete(void* p, std::size_t, std::align_val_t) noexcept
{
    countedFree(p);
}
void operator delete[](void* p, std::size_t, std::align_val_t) noexcept
{
    countedFree(p);
}
