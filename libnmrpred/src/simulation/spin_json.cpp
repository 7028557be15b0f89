// The spin-system JSON read by `nmrpred simulate`, nmr_simulate_json() and
// the Python module (nmrpred/spin.hpp: parse_spin_system_json()).
#include <cstdint>
#include <string>

#include <nlohmann/json.hpp>

#include <nmrpred/error.hpp>
#include <nmrpred/spin.hpp>

namespace nmrpred {

namespace {

using json = nlohmann::json;

[[noreturn]] void bad(const std::string &what) { throw ArgumentError("spin system JSON: " + what); }

double number(const json &v, const std::string &what) {
  // Booleans are not numbers here, although nlohmann would convert them.
  if (!v.is_number()) bad(what + " must be a number");
  return v.get<double>();
}

std::size_t index(const json &v, const std::string &what) {
  if (v.is_number_unsigned()) return v.get<std::size_t>();
  if (v.is_number_integer()) bad(what + " must not be negative");
  bad(what + " must be a non-negative integer");
}

SpinNucleus nucleus(const json &v, const std::string &what) {
  if (!v.is_string()) bad(what + " must be a string such as \"1H\"");
  try {
    return parse_spin_nucleus(v.get<std::string>());
  } catch (const ArgumentError &e) {
    bad(what + ": " + e.what());
  }
}

Spin read_spin(const json &s, std::size_t i) {
  const std::string where = "spin " + std::to_string(i);
  Spin spin;
  if (s.is_number()) {
    spin.shift_ppm = s.get<double>();
    return spin;
  }
  if (!s.is_object()) bad(where + " must be an object {\"shift\": ppm, \"nucleus\": \"1H\"} or a number");
  for (const auto &item : s.items())
    if (item.key() != "shift" && item.key() != "nucleus" && item.key() != "class" && item.key() != "exchangeable")
      bad(where + ": unknown key \"" + item.key() + "\" (known: shift, nucleus, class, exchangeable)");
  if (!s.contains("shift")) bad(where + ": \"shift\" is missing");
  spin.shift_ppm = number(s["shift"], where + ": \"shift\"");
  if (s.contains("nucleus")) spin.nucleus = nucleus(s["nucleus"], where + ": \"nucleus\"");
  if (s.contains("class")) {
    const std::size_t c = index(s["class"], where + ": \"class\"");
    if (c > static_cast<std::size_t>(INT64_MAX)) bad(where + ": \"class\" is too large");
    spin.equivalence_class = static_cast<std::int64_t>(c);
  }
  if (s.contains("exchangeable")) {
    if (!s["exchangeable"].is_boolean()) bad(where + ": \"exchangeable\" must be true or false");
    spin.exchangeable = s["exchangeable"].get<bool>();
  }
  return spin;
}

/// Reads `text`; keys left out keep `defaults`, except "mhz" when
/// `require_field` (the field places every line, so a reader with no context
/// of its own must not guess it).
SpinSystemInput parse(std::string_view text, const SimulationOptions &defaults, bool require_field) {
  json doc;
  try {
    doc = json::parse(text.begin(), text.end());
  } catch (const json::parse_error &e) {
    bad(std::string("not valid JSON: ") + e.what());
  } catch (const json::out_of_range &e) {
    // A number no double holds ("1e999").
    bad(std::string("a number beyond the range of a double: ") + e.what());
  }
  if (!doc.is_object()) bad("must be a JSON object with \"spins\" and \"couplings\"");
  static const char *const known[] = {"mhz",
                                      "spins",
                                      "couplings",
                                      "observe",
                                      "line_width_hz",
                                      "weak_coupling_ratio",
                                      "max_block_size",
                                      "merge_tolerance_hz",
                                      "equivalent_shift_tolerance_ppm"};
  for (const auto &item : doc.items()) {
    bool ok = false;
    for (const char *k : known) ok = ok || item.key() == k;
    if (!ok) bad("unknown key \"" + item.key() + "\"");
  }
  SpinSystemInput in;
  in.options = defaults;
  if (doc.contains("mhz"))
    in.options.field_mhz = number(doc["mhz"], "\"mhz\"");
  else if (require_field)
    bad("\"mhz\" (1H frequency of the spectrometer, MHz) is missing");
  if (doc.contains("observe")) in.observe = nucleus(doc["observe"], "\"observe\"");
  if (doc.contains("line_width_hz")) in.options.line_width_hz = number(doc["line_width_hz"], "\"line_width_hz\"");
  if (doc.contains("weak_coupling_ratio"))
    in.options.weak_coupling_ratio = number(doc["weak_coupling_ratio"], "\"weak_coupling_ratio\"");
  if (doc.contains("max_block_size")) in.options.max_block_size = index(doc["max_block_size"], "\"max_block_size\"");
  if (doc.contains("merge_tolerance_hz"))
    in.options.merge_tolerance_hz = number(doc["merge_tolerance_hz"], "\"merge_tolerance_hz\"");
  if (doc.contains("equivalent_shift_tolerance_ppm"))
    in.options.equivalent_shift_tolerance_ppm =
        number(doc["equivalent_shift_tolerance_ppm"], "\"equivalent_shift_tolerance_ppm\"");
  if (!doc.contains("spins") || !doc["spins"].is_array()) bad("\"spins\" must be an array of spins");
  const json &spins = doc["spins"];
  // Checked before building anything, so a huge array fails fast.
  if (spins.size() > kMaxSpins) bad("\"spins\" holds " + std::to_string(spins.size()) + " spins; at most " +
                                    std::to_string(kMaxSpins) + " are allowed");
  for (std::size_t i = 0; i < spins.size(); ++i) in.system.spins.push_back(read_spin(spins[i], i));
  if (doc.contains("couplings")) {
    const json &couplings = doc["couplings"];
    if (!couplings.is_array()) bad("\"couplings\" must be an array of [i, j, J_Hz]");
    for (std::size_t c = 0; c < couplings.size(); ++c) {
      const json &k = couplings[c];
      const std::string where = "coupling " + std::to_string(c);
      if (!k.is_array() || k.size() != 3) bad(where + " must be [i, j, J_Hz]");
      in.system.couplings.push_back(
          {index(k[0], where + ": i"), index(k[1], where + ": j"), number(k[2], where + ": J")});
    }
  }
  return in;
}

}  // namespace

SpinSystemInput parse_spin_system_json(std::string_view text) { return parse(text, SimulationOptions{}, true); }

SpinSystemInput parse_spin_system_json(std::string_view text, const SimulationOptions &defaults) {
  return parse(text, defaults, false);
}

}  // namespace nmrpred
