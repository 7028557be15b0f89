// SharedText: an immutable text whose copies share one buffer, and the
// pool a prediction writes its texts into.

#include <algorithm>
#include <cstring>
#include <limits>
#include <new>
#include <ostream>
#include <stdexcept>

#include <nmrpred/shifts.hpp>

#include "shifts/sources.hpp"

namespace nmrpred {

SharedText::SharedText(std::string_view text) {
  if (text.empty()) return;
  detail::TextPool pool;
  pool.expect(text.size() + 1);
  *this = pool.add(text);
}

SharedText::Block *SharedText::make_block(std::size_t room) {
  // Offsets and sizes are 32-bit: a prediction's texts stay far below.
  if (room > std::numeric_limits<std::uint32_t>::max()) throw std::length_error("SharedText: a text block over 4 GiB");
  void *raw = ::operator new(sizeof(Block) + room);
  auto *b = new (raw) Block;
  b->room = static_cast<std::uint32_t>(room);
  return b;
}

void SharedText::free_block(Block *b) noexcept {
  b->~Block();
  ::operator delete(static_cast<void *>(b));
}

std::ostream &operator<<(std::ostream &os, const SharedText &t) { return os << t.view(); }

namespace detail {

// Room of a block made without an expect() (a text longer than the room
// gets a block of its own size).
constexpr std::size_t kDefaultPoolRoom = 1024;

SharedText TextPool::add(std::string_view text) {
  const std::size_t need = text.size() + 1;  // the NUL that c_str() hands to C
  SharedText::Block *&block = held_.block_;
  if (!block || block->room - used_ < need) {
    // The pool's hold on the full block passes to the texts in it.
    SharedText fresh;
    fresh.block_ = SharedText::make_block(std::max(need, room_ ? room_ : kDefaultPoolRoom));
    held_ = std::move(fresh);
    used_ = 0;
    room_ = 0;
  }
  char *at = block->chars() + used_;
  std::memcpy(at, text.data(), text.size());
  at[text.size()] = '\0';
  SharedText t;
  t.block_ = block;
  t.start_ = static_cast<std::uint32_t>(used_);
  t.size_ = static_cast<std::uint32_t>(text.size());
  t.retain();
  used_ += need;
  return t;
}

void TextPool::expect(std::size_t bytes) {
  // What the current block still holds counts towards the room.
  const std::size_t left = held_.block_ ? held_.block_->room - used_ : 0;
  if (bytes > left) room_ = std::max(room_, bytes);
}

}  // namespace detail

}  // namespace nmrpred
