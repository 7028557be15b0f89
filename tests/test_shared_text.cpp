// SharedText (nmrpred/shifts.hpp): the method text of a shift, shared by
// copies and by the equivalent atoms of one prediction. Expectations are
// the texts the tests put in and, for predictions, the equivalence of the
// three methyl groups of tert-butanol (common practice: one 13C signal).

#include <doctest/doctest.h>

#include <nmrpred/classes.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/tables.hpp>

#include <cstring>
#include <sstream>
#include <string>
#include <string_view>
#include <vector>

using nmrpred::SharedText;

TEST_SUITE("shared_text") {
  TEST_CASE("a text reads back, is NUL-terminated and compares with every kind of string") {
    const std::string words = "a method text longer than fifteen characters";
    const SharedText t(words);
    CHECK(t.size() == words.size());
    CHECK(t.view() == words);
    CHECK(t.c_str()[t.size()] == '\0');
    CHECK(std::strcmp(t.c_str(), words.c_str()) == 0);
    CHECK(t == words);
    CHECK(words == t);
    CHECK(t == words.c_str());
    CHECK(words.c_str() == t);
    CHECK(t == std::string_view(words));
    CHECK(t == SharedText(words));
    CHECK(t != "another text");
    CHECK("another text" != t);
    CHECK(t.find("fifteen") == words.find("fifteen"));
    CHECK(t.find("absent") == SharedText::npos);
    CHECK(t.str() == words);
    CHECK(static_cast<std::string>(t) == words);
    std::ostringstream os;
    os << t;
    CHECK(os.str() == words);
    CHECK(SharedText().empty());
    CHECK(std::strcmp(SharedText().c_str(), "") == 0);
    CHECK(SharedText("").empty());
    CHECK(SharedText() == "");
    CHECK(SharedText(static_cast<const char *>(nullptr)).empty());
  }

  TEST_CASE("copies share the characters and outlive the original") {
    SharedText copy;
    {
      const SharedText original("built-in reference lookup, HOSE sphere 4, 3 compounds");
      copy = original;
      CHECK(copy.c_str() == original.c_str());
    }
    CHECK(copy == "built-in reference lookup, HOSE sphere 4, 3 compounds");
  }

  TEST_CASE("equivalent atoms of a prediction share one text, and the texts outlive the prediction's inputs") {
    std::vector<nmrpred::Shift> kept;
    {
      const auto m = nmrpred::read_molecule("CC(C)(C)O", nmrpred::Format::Smiles);
      const auto classes = nmrpred::compute_classes(m);
      const auto shifts = nmrpred::predict_c13(m, classes, *nmrpred::Tables::builtin());
      kept = shifts;
    }
    REQUIRE(kept.size() == 4);
    // Atoms 0, 2, 3 are the methyl carbons, atom 1 the carbinol carbon.
    CHECK(kept[0].method.c_str() == kept[2].method.c_str());
    CHECK(kept[0].method.c_str() == kept[3].method.c_str());
    CHECK(kept[0].method != kept[1].method);
    for (const auto &s : kept) {
      CHECK_FALSE(s.method.empty());
      CHECK(std::strlen(s.method.c_str()) == s.method.size());
    }
  }
}
