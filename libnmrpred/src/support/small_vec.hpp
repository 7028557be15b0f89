#ifndef NMRPRED_SUPPORT_SMALL_VEC_HPP
#define NMRPRED_SUPPORT_SMALL_VEC_HPP

// A growable array of trivially copyable values with room for N of them in
// the object itself. The HOSE engine's scratch and the increment sums built
// for nearly every atom hold a handful of values each: a std::vector there
// cost an allocation per atom, and the heap is only reached by unusually
// large cases. The inline room is left uninitialised (most lists use a few
// of N places), and copies and moves copy only the elements in use.

#include <algorithm>
#include <cstddef>
#include <new>
#include <type_traits>

namespace nmrpred::detail {

template <class T, std::size_t N>
class SmallVec {
  static_assert(std::is_trivially_copyable_v<T> && std::is_trivially_destructible_v<T>,
                "SmallVec holds plain values only");
  static_assert(N > 0);

 public:
  SmallVec() noexcept {}
  SmallVec(const SmallVec &o) { append(o.begin(), o.end()); }
  SmallVec(SmallVec &&o) noexcept { take(o); }
  SmallVec &operator=(const SmallVec &o) {
    if (this != &o) {
      size_ = 0;
      append(o.begin(), o.end());
    }
    return *this;
  }
  SmallVec &operator=(SmallVec &&o) noexcept {
    if (this != &o) {
      release();
      take(o);
    }
    return *this;
  }
  ~SmallVec() { release(); }

  T *data() noexcept { return data_; }
  const T *data() const noexcept { return data_; }
  T *begin() noexcept { return data_; }
  T *end() noexcept { return data_ + size_; }
  const T *begin() const noexcept { return data_; }
  const T *end() const noexcept { return data_ + size_; }
  std::size_t size() const noexcept { return size_; }
  bool empty() const noexcept { return size_ == 0; }
  T &operator[](std::size_t i) noexcept { return data_[i]; }
  const T &operator[](std::size_t i) const noexcept { return data_[i]; }
  T &back() noexcept { return data_[size_ - 1]; }
  const T &back() const noexcept { return data_[size_ - 1]; }

  void clear() noexcept { size_ = 0; }
  // After reserve(n) and writing the elements through data(): n <= capacity.
  void set_size(std::size_t n) noexcept { size_ = n; }
  void reserve(std::size_t n) {
    if (n > cap_) grow(n);
  }
  void resize(std::size_t n) { resize(n, T{}); }
  void resize(std::size_t n, const T &value) {
    if (n > size_) {
      const T v = value;
      reserve(n);
      std::fill(data_ + size_, data_ + n, v);
    }
    size_ = n;
  }
  void assign(std::size_t n, const T &value) {
    const T v = value;
    reserve(n);
    std::fill_n(data_, n, v);
    size_ = n;
  }
  void push_back(const T &value) {
    if (size_ == cap_) {
      const T v = value;  // `value` may live in the old buffer
      grow(2 * cap_);
      data_[size_++] = v;
      return;
    }
    data_[size_++] = value;
  }
  void append(const T *first, const T *last) {
    const auto n = static_cast<std::size_t>(last - first);
    if (size_ + n > cap_) {
      // The range may lie in the old buffer: copy it through the new one.
      T *old = data_;
      const std::size_t at = static_cast<std::size_t>(first - old);
      const bool inside = first >= old && first < old + size_;
      grow(std::max(2 * cap_, size_ + n));
      if (inside) first = data_ + at;
    }
    std::copy_n(first, n, data_ + size_);
    size_ += n;
  }

 private:
  void grow(std::size_t n) {
    n = std::max({n, 2 * cap_, 2 * N});
    T *fresh = static_cast<T *>(::operator new(n * sizeof(T)));
    std::copy_n(data_, size_, fresh);
    release();
    data_ = fresh;
    cap_ = n;
  }
  void release() noexcept {
    if (data_ != place_.items) ::operator delete(data_);
    data_ = place_.items;
    cap_ = N;
  }
  // Into an empty object: the other's heap block is taken over, its inline
  // elements copied; the other is left empty.
  void take(SmallVec &o) noexcept {
    if (o.data_ != o.place_.items) {
      data_ = o.data_;
      cap_ = o.cap_;
      o.data_ = o.place_.items;
      o.cap_ = N;
    } else {
      std::copy_n(o.place_.items, o.size_, place_.items);
    }
    size_ = o.size_;
    o.size_ = 0;
  }

  union Place {
    Place() noexcept {}  // leaves the items uninitialised
    T items[N];
  } place_;
  T *data_ = place_.items;
  std::size_t size_ = 0;
  std::size_t cap_ = N;
};

}  // namespace nmrpred::detail

#endif
