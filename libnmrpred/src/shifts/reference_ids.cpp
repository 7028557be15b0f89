// ReferenceIds: the ids of a shift's reference compounds, sharing one text.

#include <algorithm>
#include <stdexcept>

#include <nmrpred/shifts.hpp>

namespace nmrpred {

template <class Id>
void ReferenceIds::assign(std::size_t n, Id id) {
  if (n > kMax) throw std::length_error("ReferenceIds: more than 10 ids");
  auto text = std::make_shared<std::string>();
  for (std::size_t i = 0; i < n; ++i) {
    const std::string_view one = id(i);
    // The NUL after each id is what ends it (operator[]).
    if (one.find('\0') != std::string_view::npos)
      throw std::invalid_argument("ReferenceIds: an id holds a NUL character");
    start_[i] = static_cast<std::uint32_t>(text->size());
    text->append(one).push_back('\0');
  }
  size_ = static_cast<std::uint32_t>(n);
  text_ = std::move(text);
}

ReferenceIds::ReferenceIds(std::initializer_list<std::string_view> ids) {
  assign(ids.size(), [&](std::size_t i) { return ids.begin()[i]; });
}

ReferenceIds::ReferenceIds(const std::vector<std::string> &ids) {
  assign(ids.size(), [&](std::size_t i) { return std::string_view(ids[i]); });
}

std::vector<std::string> ReferenceIds::to_vector() const {
  std::vector<std::string> out;
  out.reserve(size_);
  for (const auto id : *this) out.emplace_back(id);
  return out;
}

bool operator==(const ReferenceIds &a, const ReferenceIds &b) noexcept {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin());
}

bool operator==(const ReferenceIds &a, const std::vector<std::string> &b) noexcept {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin());
}

}  // namespace nmrpred
