// Record splitting and the public reading API. Each record's text is handed to
// Open Babel on its own, so a bad record cannot desynchronise the ones after it
// and record numbers are exact.

#include <nmrpred/io.hpp>

#include <algorithm>
#include <deque>
#include <streambuf>
#include <string>
#include <utility>
#include <vector>

#include <fmt/format.h>

#include "io/build.hpp"
#include "io/detect.hpp"
#include "io/inchi_syntax.hpp"
#include "io/raw_molecule.hpp"
#include "io/text.hpp"
#include "io/v3000_syntax.hpp"

namespace nmrpred {

namespace {

using io::detail::is_blank;
using io::detail::trim;
using io::detail::trim_right;

// A record longer than this is not read into memory; it becomes an error and
// reading goes on after its "$$$$".
constexpr std::size_t kMaxRecordBytes = std::size_t{64} << 20;

// Symbol of input atom i as written in a V2000 or V3000 atom block, for
// messages; `first_line` is the input line number of lines[0].
std::string mdl_atom_description(const std::vector<std::string> &lines, std::size_t i, std::size_t first_line) {
  if (lines.size() < 4) return {};
  const auto &counts = lines[3];
  if (io::detail::is_v3000_counts_line(counts)) {
    bool in_atoms = false;
    std::size_t k = 0;
    for (std::size_t l = 4; l < lines.size(); ++l) {
      const auto t = trim(lines[l]);
      if (t == "M  V30 BEGIN ATOM") {
        in_atoms = true;
        continue;
      }
      if (!in_atoms) continue;
      if (t == "M  V30 END ATOM") break;
      if (k++ != i) continue;
      // "M  V30 index symbol x y z ..."
      const auto tok = io::detail::split_fields(t);
      if (tok.size() > 3) return fmt::format("'{}' on line {}", tok[3], first_line + l);
      return fmt::format("line {}", first_line + l);
    }
    return {};
  }
  const std::size_t l = 4 + i;
  if (l >= lines.size()) return {};
  const auto &line = lines[l];
  if (line.size() < 32) return fmt::format("line {}", first_line + l);
  // V2000 atom line: the symbol occupies columns 32-34 (MDL CTfile specification).
  return fmt::format("'{}' on line {}", trim(std::string_view(line).substr(31, 3)), first_line + l);
}

// Fills `out` from Open Babel's result. `prefix` names the record in messages.
void finish_record(io::detail::RawRead raw, const io::detail::AtomDescriber &describe, const std::string &prefix,
                   ReadRecord &out) {
  for (auto &m : raw.messages) out.warnings.push_back("Open Babel: " + m);
  if (raw.status != Status::Ok) {
    out.status = raw.status;
    out.error = prefix + raw.error;
    return;
  }
  try {
    std::vector<std::string> notes;
    MoleculeData data = io::detail::build_molecule_data(raw.molecule, describe, notes);
    for (auto &n : notes) out.warnings.push_back(std::move(n));
    data.title = out.title;
    out.molecule.emplace(std::move(data));
  } catch (const Error &e) {
    // A record-level failure: it belongs in this record, and reading goes on.
    out.molecule.reset();
    out.status = e.status();
    out.error = prefix + e.what();
  }
}

// Reads a string_view through std::istream without copying it.
class ViewBuffer : public std::streambuf {
 public:
  explicit ViewBuffer(std::string_view text) {
    // The get area is never written through; std::streambuf only lacks a const API.
    char *p = const_cast<char *>(text.data());
    setg(p, p, p + text.size());
  }
};

[[noreturn]] void throw_status(Status status, const std::string &message) {
  switch (status) {
    case Status::Argument: throw ArgumentError(message);
    case Status::Unsupported: throw UnsupportedError(message);
    case Status::Tables: throw TablesError(message);
    case Status::Internal: throw InternalError(message);
    default: throw InputError(message);
  }
}

}  // namespace

struct MoleculeReader::Impl {
  Impl(std::istream &stream, Format f) : in(stream), format(f) {}

  std::istream &in;
  Format format;
  std::size_t record = 0;
  std::size_t line_no = 0;  // lines consumed so far (1-based number of the last line read)
  std::deque<std::string> lookahead;

  bool get_line(std::string &line) {
    if (!lookahead.empty()) {
      line = std::move(lookahead.front());
      lookahead.pop_front();
    } else if (!std::getline(in, line)) {
      if (in.bad()) throw InputError(fmt::format("cannot read the input after line {}: stream error", line_no));
      return false;
    }
    io::detail::strip_cr(line);
    ++line_no;
    return true;
  }

  bool next_line_record(ReadRecord &out);
  bool next_mdl_record(ReadRecord &out);
};

MoleculeReader::MoleculeReader(std::istream &in, Format format) : impl_(std::make_unique<Impl>(in, format)) {
  if (format == Format::Auto) {
    std::string line;
    while (impl_->lookahead.size() < io::detail::kDetectLines && std::getline(in, line))
      impl_->lookahead.push_back(std::move(line));
    std::vector<std::string_view> views(impl_->lookahead.begin(), impl_->lookahead.end());
    impl_->format = io::detail::detect_from_lines(views);
  }
}

MoleculeReader::~MoleculeReader() = default;

Format MoleculeReader::format() const noexcept { return impl_->format; }

bool MoleculeReader::next(ReadRecord &out) {
  out = ReadRecord{};
  if (impl_->format == Format::Smiles || impl_->format == Format::Inchi) return impl_->next_line_record(out);
  return impl_->next_mdl_record(out);
}

bool MoleculeReader::Impl::next_line_record(ReadRecord &out) {
  std::string line;
  while (get_line(line)) {
    const auto t = trim(line);
    if (t.empty()) continue;
    std::size_t cut = 0;
    while (cut < t.size() && !io::detail::is_space(t[cut])) ++cut;
    const auto text = t.substr(0, cut);
    out.record = record++;
    out.title = std::string(trim(t.substr(cut)));
    const std::string prefix = fmt::format("record {} (line {}): ", out.record, line_no);
    if (format == Format::Inchi) {
      // Checked here because the InChI library crashes on some malformed strings.
      const auto problem = io::detail::check_inchi_syntax(text);
      if (!problem.empty()) {
        out.status = Status::Input;
        out.error = prefix + "invalid InChI: " + problem;
        return true;
      }
    }
    auto raw = io::detail::read_with_open_babel(text, format);
    finish_record(std::move(raw), {}, prefix, out);
    return true;
  }
  return false;
}

bool MoleculeReader::Impl::next_mdl_record(ReadRecord &out) {
  std::vector<std::string> lines;
  std::string line;
  std::size_t bytes = 0;
  std::size_t first_line = 0;
  bool terminated = false, oversized = false;
  while (get_line(line)) {
    if (first_line == 0) first_line = line_no;
    if (trim_right(line) == "$$$$") {
      terminated = true;
      break;
    }
    if (oversized) continue;
    bytes += line.size() + 1;
    if (bytes > kMaxRecordBytes) {
      oversized = true;
      lines.clear();
      lines.shrink_to_fit();
      continue;
    }
    lines.push_back(std::move(line));
  }
  bool blank = !oversized;
  for (const auto &l : lines)
    if (!is_blank(l)) {
      blank = false;
      break;
    }
  // Blank lines after the last "$$$$" are not a record.
  if (!terminated && blank) return false;

  out.record = record++;
  const std::string prefix = fmt::format("record {} (line {}): ", out.record, first_line);
  if (oversized) {
    out.status = Status::Input;
    out.error = prefix + fmt::format("record is larger than {} MiB", kMaxRecordBytes >> 20);
    return true;
  }
  if (blank) {
    out.status = Status::Input;
    out.error = prefix + "empty record";
    return true;
  }
  if (lines.size() < 4) {
    out.title = std::string(trim(lines.front()));
    out.status = Status::Input;
    out.error = prefix + "truncated MOL block: no counts line";
    return true;
  }
  const int shift = io::detail::mdl_header_shift(lines);
  if (shift > 0) lines.erase(lines.begin(), lines.begin() + shift);
  out.title = std::string(trim(lines.front()));
  if (shift < 0) {
    out.status = Status::Input;
    out.error = prefix + "not a MOL block: line 4 is not an MDL counts line";
    return true;
  }
  bool has_end = false;
  for (const auto &l : lines)
    if (trim_right(l) == "M  END") {
      has_end = true;
      break;
    }
  if (!has_end) {
    // The CTfile specification ends every connection table with "M  END";
    // without it the block was cut short.
    out.status = Status::Input;
    out.error = prefix + "truncated MOL block: no 'M  END' line";
    return true;
  }
  const std::size_t block_line = first_line + static_cast<std::size_t>(shift);
  std::string text;
  io::detail::V3000Block v3000;
  if (io::detail::is_v3000_counts_line(lines[3])) {
    // Checked here because Open Babel's V3000 reader does not survive every
    // malformed block (io/v3000_syntax.hpp).
    std::string problem;
    v3000 = io::detail::v3000_block(lines, block_line, problem);
    if (!problem.empty()) {
      out.status = Status::Input;
      out.error = prefix + problem;
      return true;
    }
    text = std::move(v3000.text);
  } else {
    text.reserve(bytes);
    for (const auto &l : lines) {
      text += l;
      text += '\n';
    }
  }
  auto raw = io::detail::read_with_open_babel(text, Format::Mol);
  // A double bond the file marks "cis or trans" has no geometry, whatever
  // its coordinates show.
  auto &cis_trans = raw.molecule.cis_trans;
  for (const auto &[a, b] : v3000.either_double_bonds)
    cis_trans.erase(std::remove_if(cis_trans.begin(), cis_trans.end(),
                                   [a = a, b = b](const io::detail::RawCisTrans &c) {
                                     return (c.begin == a && c.end == b) || (c.begin == b && c.end == a);
                                   }),
                    cis_trans.end());
  finish_record(
      std::move(raw), [&lines, block_line](std::size_t i) { return mdl_atom_description(lines, i, block_line); },
      prefix, out);
  return true;
}

std::vector<ReadRecord> read_records(std::string_view text, Format format) {
  ViewBuffer buffer(text);
  std::istream in(&buffer);
  MoleculeReader reader(in, format);
  std::vector<ReadRecord> out;
  ReadRecord r;
  while (reader.next(r)) out.push_back(std::move(r));
  return out;
}

Molecule read_molecule(std::string_view text, Format format) {
  ViewBuffer buffer(text);
  std::istream in(&buffer);
  MoleculeReader reader(in, format);
  ReadRecord first;
  if (!reader.next(first)) throw InputError("no molecule in input");
  if (first.status != Status::Ok) throw_status(first.status, first.error);
  ReadRecord second;
  if (reader.next(second))
    throw InputError(fmt::format("expected one molecule but the input holds more than one record (record {} "
                                 "follows)",
                                 second.record));
  return std::move(*first.molecule);
}

}  // namespace nmrpred
