#ifndef NMRPRED_SUPPORT_THREAD_LEASE_HPP
#define NMRPRED_SUPPORT_THREAD_LEASE_HPP

// Lends the calling thread's one T (made on first use) for the life of the
// lease, so that scratch buffers keep their capacity from one call to the
// next: allocating them per call cost more than the work on a small
// molecule. A lease taken while the thread's T is lent out (a nested call)
// gets a T of its own. The T is handed over as it was left: clearing what
// matters is the borrower's job.

#include <cstddef>
#include <memory>

namespace nmrpred::detail {

// Scratch of a molecule up to this many atoms is kept for the next lease;
// what a larger one took is given back (drop_on_return()).
inline constexpr std::size_t kLeaseKeepAtoms = 4096;

template <class T>
class ThreadLease {
 public:
  ThreadLease() {
    Slot &slot = thread_slot();
    if (!slot.busy) {
      if (!slot.item) slot.item = std::make_unique<T>();
      slot.busy = true;
      borrowed_ = &slot;
      item_ = slot.item.get();
    } else {
      own_ = std::make_unique<T>();
      item_ = own_.get();
    }
  }
  ThreadLease(const ThreadLease &) = delete;
  ThreadLease &operator=(const ThreadLease &) = delete;
  ~ThreadLease() {
    if (!borrowed_) return;
    if (drop_) borrowed_->item.reset();
    borrowed_->busy = false;
  }
  T &operator*() const noexcept { return *item_; }
  T *operator->() const noexcept { return item_; }
  // The thread's T is not kept when the lease ends (its buffers grew for a
  // large molecule): the next lease makes a new one.
  void drop_on_return() noexcept { drop_ = true; }
  // The lease serves a molecule of `atoms` atoms: above kLeaseKeepAtoms,
  // drop_on_return().
  void serves(std::size_t atoms) noexcept {
    if (atoms > kLeaseKeepAtoms) drop_ = true;
  }

 private:
  struct Slot {
    std::unique_ptr<T> item;
    bool busy = false;
  };
  static Slot &thread_slot() {
    thread_local Slot slot;
    return slot;
  }
  Slot *borrowed_ = nullptr;
  T *item_ = nullptr;
  std::unique_ptr<T> own_;
  bool drop_ = false;
};

}  // namespace nmrpred::detail

#endif
