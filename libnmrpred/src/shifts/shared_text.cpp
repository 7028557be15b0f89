// SharedText: an immutable text whose copies share one buffer.

#include <limits>
#include <ostream>
#include <stdexcept>

#include <nmrpred/shifts.hpp>

#include "shifts/sources.hpp"

namespace nmrpred {

SharedText::SharedText(std::string_view text) {
  if (text.empty()) return;
  detail::TextPool pool;
  *this = pool.add(text);
}

std::ostream &operator<<(std::ostream &os, const SharedText &t) { return os << t.view(); }

namespace detail {

SharedText TextPool::add(std::string_view text) {
  if (!text_) {
    text_ = std::make_shared<std::string>();
    text_->reserve(room_);
  }
  if (text_->size() + text.size() + 1 > std::numeric_limits<std::uint32_t>::max())
    throw std::length_error("SharedText: a prediction's texts exceed 4 GiB");
  SharedText t;
  t.text_ = text_;
  t.start_ = static_cast<std::uint32_t>(text_->size());
  t.size_ = static_cast<std::uint32_t>(text.size());
  // The NUL after each text is what c_str() hands to C.
  text_->append(text).push_back('\0');
  return t;
}

void TextPool::expect(std::size_t bytes) {
  if (!text_)
    room_ += bytes;
  else
    text_->reserve(text_->size() + bytes);
}

}  // namespace detail

}  // namespace nmrpred
