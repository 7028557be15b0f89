// The lookup structures of the reference index (libnmrpred/src/shifts/
// reference_index.hpp): what goes in comes out. The expectations are the
// entries the tests put in, or the reference records of the built-in tables.

#include <doctest/doctest.h>

#include <nmrpred/shifts.hpp>
#include <nmrpred/tables.hpp>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <cstdint>
#include <memory>
#include <utility>
#include <vector>

#include "shifts/reference_index.hpp"

namespace {

// Equal as stored: NaN equals NaN, every other value bit for bit.
bool same(double a, double b) {
  return (std::isnan(a) && std::isnan(b)) || std::memcmp(&a, &b, sizeof a) == 0;
}

bool same(const nmrpred::detail::Summary &a, const nmrpred::detail::Summary &b) {
  return a.n == b.n && same(a.median, b.median) && same(a.sd, b.sd);
}

bool same(const nmrpred::detail::IndexEntry &a, const nmrpred::detail::IndexEntry &b) {
  return a.compound == b.compound && a.nucleus == b.nucleus && a.key == b.key && a.digest == b.digest &&
         same(a.shift_ppm, b.shift_ppm) && same(a.increment_ppm, b.increment_ppm) &&
         same(a.pair_half_ppm, b.pair_half_ppm) && a.scheme == b.scheme;
}

bool same(const nmrpred::detail::Bucket &a, const nmrpred::detail::Bucket &b) {
  if (a.compounds.size() != b.compounds.size() || a.listed_count != b.listed_count || a.listed != b.listed ||
      !same(a.shift, b.shift) || !same(a.residual, b.residual) ||
      a.residual_by_scheme.size() != b.residual_by_scheme.size())
    return false;
  for (std::size_t i = 0; i < a.compounds.size(); ++i) {
    const auto &x = a.compounds[i], &y = b.compounds[i];
    if (x.compound != y.compound || !same(x.shift_ppm, y.shift_ppm) || !same(x.residual_ppm, y.residual_ppm) ||
        !same(x.pair_half_ppm, y.pair_half_ppm) || x.scheme != y.scheme)
      return false;
  }
  for (std::size_t i = 0; i < a.residual_by_scheme.size(); ++i)
    if (a.residual_by_scheme[i].first != b.residual_by_scheme[i].first ||
        !same(a.residual_by_scheme[i].second, b.residual_by_scheme[i].second))
      return false;
  return true;
}

// Counts the differences between two indexes of the same tables, asked
// through every key and digest of `entries` (every bucket of an index holds
// the key of some entry), plus those in bucket counts and compound facts.
std::size_t index_differences(const nmrpred::detail::ReferenceIndex &a, const nmrpred::detail::ReferenceIndex &b,
                              const std::vector<nmrpred::detail::IndexEntry> &entries,
                              const std::vector<nmrpred::ReferenceCompound> &compounds) {
  namespace d = nmrpred::detail;
  std::size_t differences = 0;
  for (int o = 0; o < 2; ++o)
    for (int nu = 0; nu < 2; ++nu)
      for (int k = 1; k <= nmrpred::kMaxHoseSpheres; ++k)
        differences += a.levels[o][nu][k].buckets().size() != b.levels[o][nu][k].buckets().size();
  for (const auto &e : entries) {
    const int o = compounds.at(e.compound).user ? d::kUser : d::kBuiltin;
    for (int k = 1; k <= nmrpred::kMaxHoseSpheres; ++k) {
      const auto key = e.key[static_cast<std::size_t>(k)], digest = e.digest[static_cast<std::size_t>(k)];
      const d::Bucket *x = a.levels[o][e.nucleus][k].find(key), *y = b.levels[o][e.nucleus][k].find(key);
      differences += !x || !y || !same(*x, *y);
      differences += !a.may_match(k, key) || !b.may_match(k, key);
      differences += !a.digest_may_match(k, digest) || !b.digest_may_match(k, digest);
    }
  }
  differences += a.constitution != b.constitution || a.id_start != b.id_start || *a.id_text != *b.id_text ||
                 a.has_user != b.has_user;
  return differences;
}

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

  TEST_CASE("the built-in compounds' entries compiled into the library are the ones worked out from the tables") {
    // The build works them out once (libnmrpred/build_tools/make_index_data.cpp)
    // so that programs start without reading the compounds again; this
    // works them out here, with the library being tested, and compares.
    namespace d = nmrpred::detail;
    const auto tables = nmrpred::Tables::builtin();
    const auto &compounds = tables->reference();
    const d::PrecomputedEntries &pre = d::kPrecomputedEntries;
    REQUIRE(pre.compounds == compounds.size());
    const d::IndexEntries fresh = d::reference_entries(*tables, 0, compounds.size());
    REQUIRE(pre.entry_count == fresh.entries.size());
    CHECK(fresh.entries.size() > 5000);  // every assigned 13C and 1H value, one entry each
    std::size_t differing = 0;
    for (std::size_t i = 0; i < fresh.entries.size(); ++i) differing += !same(pre.entries[i], fresh.entries[i]);
    CHECK(differing == 0);
    CHECK(std::equal(fresh.constitution.begin(), fresh.constitution.end(), pre.constitution));

    // Tables::builtin() used them, and its index equals one built without them.
    const auto &index = tables->reference_index();
    CHECK(index.precomputed == compounds.size());
    const auto rebuilt = d::build_reference_index(*tables, 0);  // no table files hash to 0
    CHECK(rebuilt->precomputed == 0);
    CHECK(index_differences(index, *rebuilt, fresh.entries, compounds) == 0);
  }

  TEST_CASE("with user records the built-in entries still come precomputed and the user's are worked out") {
    namespace d = nmrpred::detail;
    const auto builtin = nmrpred::Tables::builtin();
    // Invented values (demo data): a user's own assignment of toluene.
    const auto tables = builtin->with_user_reference(
        "id\tsmiles\tsolvent\tc13\th1\tsource\n"
        "demo-user-toluene\tCc1ccccc1\tCDCl3\t0=10.0;1=20.0;2,6=30.0;3,5=40.0;4=50.0\t-\tdemo data (invented)\n",
        "demo.tsv");
    const auto &compounds = tables->reference();
    REQUIRE(compounds.size() == builtin->reference().size() + 1);
    const auto &index = tables->reference_index();
    CHECK(index.precomputed == builtin->reference().size());
    CHECK(index.has_user);
    const auto rebuilt = d::build_reference_index(*tables, 0);
    CHECK(rebuilt->precomputed == 0);
    const d::IndexEntries fresh = d::reference_entries(*tables, 0, compounds.size());
    CHECK(fresh.entries.back().compound == compounds.size() - 1);
    CHECK(index_differences(index, *rebuilt, fresh.entries, compounds) == 0);
  }

  TEST_CASE("tables read from a folder with other files than the built-in ones are indexed from scratch") {
    // Any change to a table file changes the hash, so precomputed entries
    // of other files are never used: here the index of a Tables whose hash
    // differs (as build_reference_index is given it) works every compound out.
    namespace d = nmrpred::detail;
    const auto tables = nmrpred::Tables::builtin();
    const auto other = d::build_reference_index(*tables, d::kPrecomputedEntries.files_hash ^ 1u);
    CHECK(other->precomputed == 0);
    CHECK(other->constitution == tables->reference_index().constitution);
  }
}
