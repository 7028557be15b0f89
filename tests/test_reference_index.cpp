// The lookup structures of the reference index (libnmrpred/src/shifts/
// reference_index.hpp): what goes in comes out. The expectations are the
// entries the tests put in, or the reference records of the built-in tables.

#include <doctest/doctest.h>

#include <nmrpred/shifts.hpp>
#include <nmrpred/tables.hpp>

#include <algorithm>
#include <cstdint>
#include <memory>
#include <utility>
#include <vector>

#include "shifts/reference_index.hpp"

namespace {

nmrpred::detail::Bucket bucket_of(std::uint32_t compound) {
  nmrpred::detail::Bucket b;
  b.compounds.push_back({compound, 0, 0, 0, 0});
  return b;
}

}  // namespace

TEST_SUITE("reference_index") {
  TEST_CASE("a bucket table finds every key it holds, 0 included, and no other") {
    // 106 keys in 256 slots: two of them share a home slot (worked out
    // beside the test with the table's hash), so finding the second probes
    // past a taken slot; 0 is the value empty slots of HashSet hold.
    std::vector<std::uint64_t> keys = {0, 1, 2, 3, 0xFFFFFFFFFFFFFFFFull, 0x8000000000000000ull};
    for (std::uint64_t k = 1000; k < 1100; ++k) keys.push_back(k * 0x100000001B3ull);
    std::vector<std::pair<std::uint64_t, nmrpred::detail::Bucket>> entries;
    for (std::size_t i = 0; i < keys.size(); ++i) entries.emplace_back(keys[i], bucket_of(static_cast<std::uint32_t>(i)));
    nmrpred::detail::BucketTable table;
    table.assign(std::move(entries));
    for (std::size_t i = 0; i < keys.size(); ++i) {
      const auto *b = table.find(keys[i]);
      REQUIRE(b != nullptr);
      CHECK(b->compounds.at(0).compound == i);
    }
    for (std::uint64_t absent : {std::uint64_t{4}, std::uint64_t{5}, std::uint64_t{1000}, std::uint64_t{0x7FFFFFFFFFFFFFFF}})
      CHECK(table.find(absent) == nullptr);
    nmrpred::detail::BucketTable empty;
    CHECK(empty.find(0) == nullptr);
    CHECK(empty.find(42) == nullptr);
  }

  TEST_CASE("a bucket table can be asked to prefetch any key, empty or filled") {
    nmrpred::detail::BucketTable empty;
    empty.prefetch(0);
    empty.prefetch(0xFFFFFFFFFFFFFFFFull);
    std::vector<std::pair<std::uint64_t, nmrpred::detail::Bucket>> entries;
    entries.emplace_back(7, bucket_of(3));
    nmrpred::detail::BucketTable filled;
    filled.assign(std::move(entries));
    filled.prefetch(7);
    filled.prefetch(8);
    CHECK(filled.find(7) != nullptr);
  }

  TEST_CASE("the ids a shift lists for the index's compounds are the records' ids") {
    const auto tables = nmrpred::Tables::builtin();
    const auto &index = tables->reference_index();
    const auto &records = tables->reference();
    REQUIRE(!records.empty());
    // In lists of up to ReferenceIds::kMax compounds, as lookups make them.
    std::vector<std::uint32_t> compounds(records.size());
    for (std::uint32_t c = 0; c < compounds.size(); ++c) compounds[c] = c;
    for (std::size_t first = 0; first < compounds.size(); first += nmrpred::ReferenceIds::kMax) {
      const std::size_t n = std::min(nmrpred::ReferenceIds::kMax, compounds.size() - first);
      nmrpred::ReferenceIds ids;
      nmrpred::detail::ReferenceIdsAccess::assign(ids, index, compounds.data() + first, n);
      REQUIRE(ids.size() == n);
      for (std::size_t i = 0; i < n; ++i) CHECK(ids[i] == records[first + i].id);
    }
  }

  TEST_CASE("each bucket of the built-in index lists the first compounds it holds") {
    const auto tables = nmrpred::Tables::builtin();
    const auto &index = tables->reference_index();
    std::size_t buckets = 0;
    for (const auto &by_nucleus : index.levels)
      for (const auto &by_level : by_nucleus)
        for (const auto &table : by_level)
          for (const auto &b : table.buckets()) {
            ++buckets;
            const std::size_t n = std::min(nmrpred::detail::kMaxListedReferences, b.compounds.size());
            REQUIRE(b.listed_count == n);
            for (std::size_t i = 0; i < n; ++i) CHECK(b.listed[i] == b.compounds[i].compound);
          }
    CHECK(buckets > 0);
  }
}
