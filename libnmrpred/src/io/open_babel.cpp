// The only translation unit that includes Open Babel. Everything Open Babel
// touches (plugin registry, message log, aromaticity and stereo perception)
// is process-wide state, so every call goes through one mutex here and the
// result is copied into plain RawMolecule data before the lock is released.

#include <algorithm>
#include <cctype>
#include <mutex>
#include <new>
#include <ostream>
#include <sstream>
#include <string>
#include <vector>

#include <fmt/format.h>

#include <openbabel/atom.h>
#include <openbabel/base.h>
#include <openbabel/bond.h>
#include <openbabel/mol.h>
#include <openbabel/obconversion.h>
#include <openbabel/oberror.h>
#include <openbabel/obfunctions.h>
#include <openbabel/obiter.h>
#include <openbabel/stereo/cistrans.h>
#include <openbabel/stereo/stereo.h>
#include <openbabel/stereo/tetrahedral.h>

#include "io/raw_molecule.hpp"
#include "io/text.hpp"

namespace nmrpred::io::detail {

namespace {

namespace ob = OpenBabel;

// Constant-initialised (std::mutex has a constexpr constructor), so there is no
// start-up order issue. It guards Open Babel's globals, not data of ours.
std::mutex open_babel_mutex;

// Open Babel reports through the global obErrorLog, which by default prints to
// std::clog. While we hold the lock, its output goes to a stream without a
// buffer (writes are dropped) and we read the messages back from the log.
class MessageCapture {
 public:
  MessageCapture() : sink_(nullptr), previous_(ob::obErrorLog.GetOutputStream()) {
    ob::obErrorLog.SetOutputStream(&sink_);
    ob::obErrorLog.StartLogging();
    ob::obErrorLog.ClearLog();
  }
  ~MessageCapture() {
    // Clearing keeps the global log bounded over millions of records.
    ob::obErrorLog.ClearLog();
    ob::obErrorLog.SetOutputStream(previous_);
  }
  MessageCapture(const MessageCapture &) = delete;
  MessageCapture &operator=(const MessageCapture &) = delete;

  std::vector<std::string> take() {
    std::vector<std::string> out;
    for (auto level : {ob::obError, ob::obWarning})
      for (const auto &m : ob::obErrorLog.GetMessagesOfLevel(level)) {
        auto text = clean(m);
        if (!text.empty() && std::find(out.begin(), out.end(), text) == out.end()) out.push_back(std::move(text));
      }
    ob::obErrorLog.ClearLog();
    return out;
  }

 private:
  // Open Babel formats a message as a banner of '=' signs, a line
  // "*** Open Babel Warning  in Function" and the text; keep only the text.
  static std::string clean(const std::string &message) {
    std::string out;
    std::istringstream lines(message);
    std::string line;
    while (std::getline(lines, line)) {
      const auto t = trim(line);
      if (t.empty() || t.find_first_not_of('=') == std::string_view::npos || starts_with(t, "*** Open Babel"))
        continue;
      if (!out.empty()) out += ' ';
      out.append(t.data(), t.size());
    }
    return out;
  }

  std::ostream sink_;
  std::ostream *previous_;
};

const char *open_babel_format(Format format) {
  switch (format) {
    case Format::Smiles: return "smi";
    case Format::Inchi: return "inchi";
    default: return "mdl";
  }
}

const char *describe(Format format) {
  switch (format) {
    case Format::Smiles: return "SMILES";
    case Format::Inchi: return "InChI";
    default: return "MOL block";
  }
}

std::string join(const std::vector<std::string> &parts) {
  std::string out;
  for (const auto &p : parts) {
    if (!out.empty()) out += "; ";
    out += p;
  }
  return out;
}

bool contains_nocase(const std::string &haystack, std::string_view needle) {
  auto it = std::search(haystack.begin(), haystack.end(), needle.begin(), needle.end(), [](char a, char b) {
    return std::tolower(static_cast<unsigned char>(a)) == std::tolower(static_cast<unsigned char>(b));
  });
  return it != haystack.end();
}

std::int32_t map_ref(ob::OBMol &mol, unsigned long ref) {
  if (ref == ob::OBStereo::ImplicitRef) return kRefImplicit;
  if (ref == ob::OBStereo::NoRef) return kRefNone;
  const ob::OBAtom *a = mol.GetAtomById(ref);
  return a ? static_cast<std::int32_t>(a->GetIdx() - 1) : kRefNone;
}

// Unpaired (or, for a singlet, non-bonding) electrons of an atom.
int radical_electrons(ob::OBAtom &atom, Format format) {
  switch (atom.GetSpinMultiplicity()) {
    // MDL "M  RAD": 1 singlet, 2 doublet, 3 triplet (MDL CTfile specification).
    // A singlet carbene counts 2 electrons, as [CH2] does from SMILES below.
    case 1: return 2;
    case 2: return 1;
    case 3: return 2;
    default: break;
  }
  if (format == Format::Mol) return 0;
  // SMILES bracket atoms and InChI state hydrogen counts exactly and Open Babel 3
  // no longer assigns spin from them, so an atom below its typical valence
  // carries the missing electrons as radicals ([CH3] methyl, [CH2] methylene):
  // common practice (OpenSMILES: a bracket atom has exactly the hydrogens written).
  const unsigned valence = atom.GetTotalValence();
  const unsigned typical = ob::GetTypicalValence(atom.GetAtomicNum(), valence, atom.GetFormalCharge());
  return typical > valence ? static_cast<int>(typical - valence) : 0;
}

// Does a wavy ("either") stereo bond start at atom `idx` (1-based)? A MOL
// file draws a centre whose configuration is not known with one (V2000 bond
// stereo 4, V3000 CFG=2; MDL CTfile specification, from memory), but Open
// Babel 3.1.1 gives the centre a configuration from a V2000 file's
// coordinates all the same.
bool wavy_bond_at(ob::OBMol &mol, unsigned idx) {
  ob::OBAtom *atom = mol.GetAtom(static_cast<int>(idx));
  if (!atom) return false;
  FOR_BONDS_OF_ATOM(b, atom) {
    if (b->IsWedgeOrHash() && b->GetBeginAtomIdx() == idx) return true;
  }
  return false;
}

RawMolecule extract(ob::OBMol &mol, Format format) {
  RawMolecule raw;
  raw.dimension = mol.GetDimension();
  const unsigned n = mol.NumAtoms();
  raw.atoms.resize(n);
  for (unsigned i = 0; i < n; ++i) {
    ob::OBAtom *a = mol.GetAtom(static_cast<int>(i + 1));
    RawAtom &r = raw.atoms[i];
    r.atomic_number = static_cast<int>(a->GetAtomicNum());
    r.isotope = static_cast<int>(a->GetIsotope());
    r.formal_charge = a->GetFormalCharge();
    r.aromatic = a->IsAromatic();
    r.implicit_hydrogens = a->GetImplicitHCount();
    r.radical_electrons = radical_electrons(*a, format);
    r.x = a->GetX();
    r.y = a->GetY();
    r.z = a->GetZ();
  }
  raw.bonds.reserve(mol.NumBonds());
  FOR_BONDS_OF_MOL(b, mol) {
    RawBond r;
    r.begin = b->GetBeginAtomIdx() - 1;
    r.end = b->GetEndAtomIdx() - 1;
    r.order = static_cast<int>(b->GetBondOrder());
    r.aromatic = b->IsAromatic();
    raw.bonds.push_back(r);
  }

  // No perception here: the readers already stored what the input specified
  // (SMILES @/@@ and / \, MOL wedges, parities and coordinates).
  ob::OBStereoFacade facade(&mol, false);
  for (ob::OBTetrahedralStereo *ts : facade.GetAllTetrahedralStereo()) {
    if (!ts || !ts->IsSpecified()) continue;
    const auto cfg = ts->GetConfig(ob::OBStereo::Clockwise, ob::OBStereo::ViewFrom);
    if (!cfg.specified || cfg.refs.size() != 3) continue;
    const auto centre = map_ref(mol, cfg.center);
    if (centre < 0) continue;
    if (format == Format::Mol && wavy_bond_at(mol, static_cast<unsigned>(centre) + 1)) continue;
    RawTetrahedral t;
    t.centre = static_cast<std::uint32_t>(centre);
    t.ligands = {map_ref(mol, cfg.from), map_ref(mol, cfg.refs[0]), map_ref(mol, cfg.refs[1]),
                 map_ref(mol, cfg.refs[2])};
    raw.tetrahedral.push_back(t);
  }
  for (ob::OBCisTransStereo *ct : facade.GetAllCisTransStereo()) {
    if (!ct || !ct->IsSpecified()) continue;
    const auto cfg = ct->GetConfig(ob::OBStereo::ShapeU);
    if (!cfg.specified || cfg.refs.size() != 4) continue;
    const auto begin = map_ref(mol, cfg.begin), end = map_ref(mol, cfg.end);
    if (begin < 0 || end < 0) continue;
    RawCisTrans c;
    c.begin = static_cast<std::uint32_t>(begin);
    c.end = static_cast<std::uint32_t>(end);
    for (int k = 0; k < 4; ++k) c.refs[k] = map_ref(mol, cfg.refs[k]);
    raw.cis_trans.push_back(c);
  }
  return raw;
}

// Quotes input in a message: at most 60 bytes, control characters written as
// \xNN so a message never carries terminal escapes or line breaks.
std::string shorten(std::string_view text) {
  constexpr std::size_t kMax = 60;
  std::string out;
  for (std::size_t i = 0; i < text.size() && i < kMax; ++i) {
    const auto c = static_cast<unsigned char>(text[i]);
    if (c < 0x20 || c == 0x7F)
      out += fmt::format("\\x{:02X}", c);
    else
      out += static_cast<char>(c);
  }
  if (text.size() > kMax) out += "...";
  return out;
}

}  // namespace

std::string reader_version() { return OpenBabel::OBReleaseVersion(); }

RawRead read_with_open_babel(std::string_view text, Format format) {
  RawRead out;
  std::lock_guard<std::mutex> lock(open_babel_mutex);
  MessageCapture capture;
  try {
    ob::OBConversion conv;
    if (!conv.SetInFormat(open_babel_format(format))) {
      out.status = Status::Unsupported;
      out.error = fmt::format("{} input is not available: Open Babel's '{}' format plugin is not loaded",
                              describe(format), open_babel_format(format));
      out.messages = capture.take();
      return out;
    }
    ob::OBMol mol;
    const bool ok = conv.ReadString(&mol, std::string(text));
    out.messages = capture.take();
    if (!ok) {
      out.status = Status::Input;
      if (format == Format::Mol)
        out.error = "cannot read MOL block";
      else
        out.error = fmt::format("invalid {} '{}'", describe(format), shorten(text));
      if (!out.messages.empty()) out.error += fmt::format(" (Open Babel: {})", join(out.messages));
      return out;
    }
    for (const auto &m : out.messages)
      if (contains_nocase(m, "kekulize")) {
        // Open Babel keeps going with an arbitrary bond pattern; that would be
        // a wrong structure, not a usable one.
        out.status = Status::Input;
        out.error = fmt::format("aromatic system cannot be given a Kekule structure (Open Babel: {})", m);
        return out;
      }
    out.molecule = extract(mol, format);
    // Perception during extraction can log too.
    for (auto &m : capture.take()) out.messages.push_back(std::move(m));
  } catch (const std::bad_alloc &) {
    throw;
  } catch (const std::exception &e) {
    // Some Open Babel readers throw on malformed text (e.g. the InChI reader).
    out.status = Status::Input;
    out.error = fmt::format("cannot read {}: Open Babel failed ({})", describe(format), e.what());
    out.molecule = RawMolecule{};
  }
  return out;
}

}  // namespace nmrpred::io::detail
