// Format names and content-based format recognition.

#include <nmrpred/io.hpp>

#include <algorithm>
#include <cctype>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "io/detect.hpp"
#include "io/text.hpp"

namespace nmrpred {

Format parse_format(std::string_view name) {
  std::string lower(name);
  std::transform(lower.begin(), lower.end(), lower.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  if (lower == "auto") return Format::Auto;
  if (lower == "smi" || lower == "smiles") return Format::Smiles;
  if (lower == "mol" || lower == "mdl") return Format::Mol;
  if (lower == "sdf" || lower == "sd") return Format::Sdf;
  if (lower == "inchi") return Format::Inchi;
  throw ArgumentError(fmt::format("unknown structure format '{}' (expected auto, smiles, mol, sdf or inchi)", name));
}

const char *format_name(Format format) noexcept {
  switch (format) {
    case Format::Auto: return "auto";
    case Format::Smiles: return "smiles";
    case Format::Mol: return "mol";
    case Format::Sdf: return "sdf";
    case Format::Inchi: return "inchi";
  }
  return "auto";
}

namespace io::detail {

Format detect_from_lines(const std::vector<std::string_view> &lines) {
  for (auto line : lines) {
    const auto t = trim(line);
    if (t.empty()) continue;
    if (starts_with(t, "InChI=")) return Format::Inchi;
    break;
  }
  for (auto line : lines)
    if (is_mdl_marker_line(line)) return Format::Sdf;
  if (mdl_header_shift(lines) >= 0) return Format::Sdf;
  return Format::Smiles;
}

}  // namespace io::detail

Format detect_format(std::string_view text) {
  // Only the first lines are examined, exactly as MoleculeReader does on a
  // stream, so both give the same answer for the same text.
  std::vector<std::string_view> lines;
  std::size_t pos = 0;
  while (pos < text.size() && lines.size() < io::detail::kDetectLines) {
    auto nl = text.find('\n', pos);
    if (nl == std::string_view::npos) nl = text.size();
    lines.push_back(text.substr(pos, nl - pos));
    pos = nl + 1;
  }
  return io::detail::detect_from_lines(lines);
}

}  // namespace nmrpred
