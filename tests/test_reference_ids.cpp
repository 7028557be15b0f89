// ReferenceIds (nmrpred/shifts.hpp): the ids a shift lists, shared between
// copies. Expectations are the ids the tests put in and, for predictions,
// the reference records of the built-in tables.

#include <doctest/doctest.h>

#include <nmrpred/classes.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/tables.hpp>

#include <algorithm>
#include <cstring>
#include <stdexcept>
#include <string>
#include <vector>

using nmrpred::ReferenceIds;

TEST_SUITE("reference_ids") {
  TEST_CASE("ids read back in order, NUL-terminated, and compare with lists of strings") {
    const ReferenceIds ids{"acetone", "a-reference-id-longer-than-fifteen-characters", ""};
    REQUIRE(ids.size() == 3);
    CHECK(ids[0] == "acetone");
    CHECK(ids[1] == "a-reference-id-longer-than-fifteen-characters");
    CHECK(ids[2].empty());
    for (const auto id : ids) CHECK(id.data()[id.size()] == '\0');
    CHECK(std::strcmp(ids[1].data(), "a-reference-id-longer-than-fifteen-characters") == 0);
    const std::vector<std::string> same{"acetone", "a-reference-id-longer-than-fifteen-characters", ""};
    CHECK(ids == same);
    CHECK(ids.to_vector() == same);
    CHECK(ids == ReferenceIds(same));
    CHECK(ids != ReferenceIds{"acetone"});
    CHECK(ids != std::vector<std::string>{"acetone", "other", ""});
    CHECK(ReferenceIds().empty());
    CHECK(ReferenceIds() == std::vector<std::string>{});
  }

  TEST_CASE("copies share the text and outlive the original") {
    ReferenceIds copy;
    {
      const ReferenceIds original{"toluene", "ethylbenzene-with-a-long-name"};
      copy = original;
      CHECK(copy[1].data() == original[1].data());
    }
    CHECK(copy[0] == "toluene");
    CHECK(copy[1] == "ethylbenzene-with-a-long-name");
    copy.clear();
    CHECK(copy.empty());
  }

  TEST_CASE("more than ten ids or an id holding NUL is refused") {
    const std::vector<std::string> eleven(11, "x");
    CHECK_THROWS_AS(ReferenceIds{eleven}, std::length_error);
    CHECK_NOTHROW(ReferenceIds(std::vector<std::string>(10, "x")));
    CHECK_THROWS_AS(ReferenceIds({std::string_view("a\0b", 3)}), std::invalid_argument);
  }

  TEST_CASE("a lookup's ids outlive the tables that made them") {
    // Invented demo record (a user table made and dropped inside the block),
    // with an id longer than any short-string buffer.
    const char *records = "id\tsmiles\tsolvent\tc13\th1\tsource\n"
                          "demo-user-toluene-with-a-long-id\tCc1ccccc1\tCDCl3\t0=10.0;1=20.0;2,6=30.0;3,5=40.0;4=50.0"
                          "\t-\tdemo data (invented)\n";
    std::vector<nmrpred::Shift> shifts;
    {
      const auto user = nmrpred::Tables::builtin()->with_user_reference(records, "demo.tsv");
      const auto m = nmrpred::read_molecule("Cc1ccccc1", nmrpred::Format::Smiles);
      shifts = nmrpred::predict_c13(m, nmrpred::compute_classes(m), *user);
    }
    REQUIRE(shifts.size() == 7);
    for (const auto &s : shifts) {
      CHECK(s.source == nmrpred::ShiftSourceKind::UserReference);
      CHECK(s.references == std::vector<std::string>{"demo-user-toluene-with-a-long-id"});
      CHECK(std::strcmp(s.references[0].data(), "demo-user-toluene-with-a-long-id") == 0);
    }
  }
}
