#ifndef NMRPRED_SHIFTS_HPP
#define NMRPRED_SHIFTS_HPP

/// \file shifts.hpp
/// Chemical-shift prediction. Every atom of the requested nucleus gets a value
/// (ppm from TMS), a one-standard-deviation uncertainty, the method that
/// produced it and the reference compounds behind it. Sources are tried in
/// order: the user's reference compounds, the built-in reference compounds
/// (longest HOSE sphere match with enough support), then published increment
/// rules, then a last-resort class average with a large uncertainty.
///
/// Thread rule: pure functions of their arguments; call from any thread.

#include <array>
#include <atomic>
#include <cstddef>
#include <cstdint>
#include <initializer_list>
#include <iosfwd>
#include <iterator>
#include <memory>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include <nmrpred/classes.hpp>
#include <nmrpred/error.hpp>
#include <nmrpred/export.hpp>
#include <nmrpred/molecule.hpp>
#include <nmrpred/tables.hpp>

namespace nmrpred {

/// Nuclei the library predicts. The value is the mass number.
enum class Nucleus : int { H1 = 1, C13 = 13 };

/// Which kind of source produced a shift.
enum class ShiftSourceKind : int {
  UserReference = 1,  ///< the user's assigned compounds
  Reference = 2,      ///< the built-in assigned compounds
  Increments = 3,     ///< published increment rules
  ClassAverage = 4,   ///< last resort: typical value of the atom's class
};

namespace detail {
struct ReferenceIdsAccess;
class TextPool;
}  // namespace detail

/// An immutable text whose copies share one buffer. A prediction writes the
/// method texts of all its atoms into one buffer: equivalent atoms share
/// their class's text, and a string per atom cost an allocation and a copy
/// for every atom (benchmarks/README.md). A text made by a prediction keeps
/// that buffer (a few kilobytes) alive while any copy of it lives; copies may
/// be used and dropped from any thread. The characters are followed by a NUL,
/// so c_str() may be handed to C.
class NMRPRED_API SharedText {
 public:
  static constexpr std::size_t npos = std::string_view::npos;
  SharedText() noexcept = default;
  /// A text with a buffer of its own.
  SharedText(std::string_view text);
  SharedText(const std::string &text) : SharedText(std::string_view(text)) {}
  SharedText(const char *text) : SharedText(text ? std::string_view(text) : std::string_view()) {}
  SharedText(const SharedText &other) noexcept : block_(other.block_), start_(other.start_), size_(other.size_) {
    retain();
  }
  SharedText(SharedText &&other) noexcept : block_(other.block_), start_(other.start_), size_(other.size_) {
    other.block_ = nullptr;
    other.start_ = other.size_ = 0;
  }
  SharedText &operator=(const SharedText &other) noexcept {
    SharedText copy(other);
    swap(copy);
    return *this;
  }
  SharedText &operator=(SharedText &&other) noexcept {
    SharedText taken(std::move(other));
    swap(taken);
    return *this;
  }
  ~SharedText() { release(); }
  void swap(SharedText &other) noexcept {
    std::swap(block_, other.block_);
    std::swap(start_, other.start_);
    std::swap(size_, other.size_);
  }

  std::string_view view() const noexcept { return {c_str(), size_}; }
  operator std::string_view() const noexcept { return view(); }
  std::string str() const { return std::string(view()); }
  explicit operator std::string() const { return str(); }
  /// NUL-terminated; valid while any copy of this text lives.
  const char *c_str() const noexcept { return block_ ? block_->chars() + start_ : ""; }
  std::size_t size() const noexcept { return size_; }
  bool empty() const noexcept { return size_ == 0; }
  std::size_t find(std::string_view what, std::size_t from = 0) const noexcept { return view().find(what, from); }
  std::size_t find(char what, std::size_t from = 0) const noexcept { return view().find(what, from); }

  // Every comparison is of the characters. Overloads for each kind of
  // string, so that neither side's conversion makes a call ambiguous.
  friend bool operator==(const SharedText &a, const SharedText &b) noexcept { return a.view() == b.view(); }
  friend bool operator==(const SharedText &a, std::string_view b) noexcept { return a.view() == b; }
  friend bool operator==(const SharedText &a, const std::string &b) noexcept { return a.view() == b; }
  friend bool operator==(const SharedText &a, const char *b) noexcept { return a.view() == b; }
  friend bool operator==(std::string_view a, const SharedText &b) noexcept { return b == a; }
  friend bool operator==(const std::string &a, const SharedText &b) noexcept { return b == a; }
  friend bool operator==(const char *a, const SharedText &b) noexcept { return b == a; }
  friend bool operator!=(const SharedText &a, const SharedText &b) noexcept { return !(a == b); }
  friend bool operator!=(const SharedText &a, std::string_view b) noexcept { return !(a == b); }
  friend bool operator!=(const SharedText &a, const std::string &b) noexcept { return !(a == b); }
  friend bool operator!=(const SharedText &a, const char *b) noexcept { return !(a == b); }
  friend bool operator!=(std::string_view a, const SharedText &b) noexcept { return !(b == a); }
  friend bool operator!=(const std::string &a, const SharedText &b) noexcept { return !(b == a); }
  friend bool operator!=(const char *a, const SharedText &b) noexcept { return !(b == a); }
  friend NMRPRED_API std::ostream &operator<<(std::ostream &os, const SharedText &t);

 private:
  friend class detail::TextPool;
  // One allocation: the count of texts (and pools) that use it, its room,
  // then the characters. A pool fills it text by text; the texts never change.
  struct Block {
    std::atomic<std::uint32_t> users{1};
    std::uint32_t room = 0;
    char *chars() noexcept { return reinterpret_cast<char *>(this + 1); }
  };
  static Block *make_block(std::size_t room);
  static void free_block(Block *b) noexcept;
  void retain() const noexcept {
    if (block_) block_->users.fetch_add(1, std::memory_order_relaxed);
  }
  void release() noexcept {
    if (block_ && block_->users.fetch_sub(1, std::memory_order_acq_rel) == 1) free_block(block_);
    block_ = nullptr;
  }
  Block *block_ = nullptr;
  std::uint32_t start_ = 0, size_ = 0;
};

/// Ids of the reference compounds behind one shift, at most kMax of them.
/// An immutable value whose copies share the text: a prediction lists the
/// same ids for every atom of a class and for every atom matched in the same
/// environment, and a list of strings per atom cost several allocations per
/// atom, about a third of a prediction's (benchmarks/README.md). Elements are
/// views that stay valid while any copy of the list lives; each is followed
/// by a NUL character, so data() may be handed to C.
class NMRPRED_API ReferenceIds {
 public:
  static constexpr std::size_t kMax = 10;
  ReferenceIds() = default;
  /// A list of its own ids (std::length_error beyond kMax).
  ReferenceIds(std::initializer_list<std::string_view> ids);
  explicit ReferenceIds(const std::vector<std::string> &ids);

  std::size_t size() const noexcept { return size_; }
  bool empty() const noexcept { return size_ == 0; }
  /// The i-th id (i < size()), NUL-terminated.
  std::string_view operator[](std::size_t i) const noexcept {
    const char *text = text_->data() + start_[i];
    return std::string_view(text, std::char_traits<char>::length(text));
  }
  class const_iterator {
   public:
    using iterator_category = std::random_access_iterator_tag;
    using value_type = std::string_view;
    using difference_type = std::ptrdiff_t;
    using pointer = void;
    using reference = std::string_view;
    const_iterator() = default;
    std::string_view operator*() const noexcept { return (*list_)[i_]; }
    const_iterator &operator++() noexcept { return ++i_, *this; }
    const_iterator operator++(int) noexcept { const_iterator t = *this; ++i_; return t; }
    const_iterator &operator--() noexcept { return --i_, *this; }
    const_iterator &operator+=(difference_type d) noexcept { return i_ += static_cast<std::size_t>(d), *this; }
    friend const_iterator operator+(const_iterator a, difference_type d) noexcept { return a += d; }
    friend difference_type operator-(const const_iterator &a, const const_iterator &b) noexcept {
      return static_cast<difference_type>(a.i_) - static_cast<difference_type>(b.i_);
    }
    std::string_view operator[](difference_type d) const noexcept { return (*list_)[i_ + static_cast<std::size_t>(d)]; }
    friend bool operator==(const const_iterator &a, const const_iterator &b) noexcept { return a.i_ == b.i_; }
    friend bool operator!=(const const_iterator &a, const const_iterator &b) noexcept { return a.i_ != b.i_; }
    friend bool operator<(const const_iterator &a, const const_iterator &b) noexcept { return a.i_ < b.i_; }

   private:
    friend class ReferenceIds;
    const_iterator(const ReferenceIds *list, std::size_t i) : list_(list), i_(i) {}
    const ReferenceIds *list_ = nullptr;
    std::size_t i_ = 0;
  };
  const_iterator begin() const noexcept { return {this, 0}; }
  const_iterator end() const noexcept { return {this, size_}; }
  std::vector<std::string> to_vector() const;
  void clear() noexcept { *this = ReferenceIds(); }

  friend NMRPRED_API bool operator==(const ReferenceIds &a, const ReferenceIds &b) noexcept;
  friend bool operator!=(const ReferenceIds &a, const ReferenceIds &b) noexcept { return !(a == b); }
  friend NMRPRED_API bool operator==(const ReferenceIds &a, const std::vector<std::string> &b) noexcept;
  friend bool operator!=(const ReferenceIds &a, const std::vector<std::string> &b) noexcept { return !(a == b); }
  friend bool operator==(const std::vector<std::string> &a, const ReferenceIds &b) noexcept { return b == a; }
  friend bool operator!=(const std::vector<std::string> &a, const ReferenceIds &b) noexcept { return !(b == a); }

 private:
  friend struct detail::ReferenceIdsAccess;
  // A text of the list's own from n ids, id(i) the i-th (defined in reference_ids.cpp, its one user).
  template <class Id>
  void assign(std::size_t n, Id id);
  // NUL-separated ids; starts of the listed ones.
  std::shared_ptr<const std::string> text_;
  std::array<std::uint32_t, kMax> start_{};
  std::uint32_t size_ = 0;
};

/// One predicted shift. Plain value.
struct Shift {
  std::size_t atom = 0;
  Nucleus nucleus = Nucleus::C13;
  double ppm = 0;              ///< chemical shift, ppm from TMS
  double uncertainty_ppm = 0;  ///< one standard deviation, ppm
  ShiftSourceKind source = ShiftSourceKind::Reference;
  int sphere = 0;              ///< HOSE spheres matched (lookups), else 0
  SharedText method;           ///< in words: source, sphere level and support, or rules summed
  ReferenceIds references;     ///< ids of the reference compounds that contributed
  /// 1H only: a proton on O, N or S, whose shift depends on solvent,
  /// concentration and temperature and whose signal may be broad.
  bool exchangeable = false;
  /// 1H only: false for an exchangeable proton replaced by deuterium in a
  /// solvent that exchanges (D2O, CD3OD): it gives no signal.
  bool observed = true;
  friend bool operator==(const Shift &a, const Shift &b) {
    return a.atom == b.atom && a.nucleus == b.nucleus && a.ppm == b.ppm &&
           a.uncertainty_ppm == b.uncertainty_ppm && a.method == b.method;
  }
};

/// Settings of a shift prediction. Plain value.
struct ShiftOptions {
  /// Predict as if every reference compound with the same constitution as the
  /// query were absent (honest measurement on compounds the tables hold).
  bool blind = false;
  /// Use the reference compounds (user and built-in). Off: increments only.
  bool use_reference = true;
  /// Use increment rules before the last resort.
  bool use_increments = true;
  /// Solvent (name or alias from tables/solvents.tsv). Matters for
  /// exchangeable protons and for the 13C carbons that
  /// tables/increments/c13_solvent.tsv lists (carboxylic acid C=O in
  /// DMSO-d6); other values are for CDCl3 unless a method says otherwise.
  std::string solvent = "CDCl3";
};

/// 13C shifts of every carbon atom, in atom order. Equivalent atoms (same
/// chemical class) get identical values. `classes` must come from
/// compute_classes(molecule). Warnings (atoms only the last resort could
/// handle, unusual elements) are appended to `warnings` when it is not null.
/// Throws ArgumentError if `classes` belongs to another molecule, or for an
/// unknown solvent when the 13C tables hold solvent terms.
NMRPRED_API std::vector<Shift> predict_c13(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                                           const ShiftOptions &options = {},
                                           std::vector<std::string> *warnings = nullptr);

/// 1H shifts of every proton (hydrogen of natural or mass 1; deuterium and
/// tritium are left out), in atom order. Equivalent protons (same chemical
/// class) get identical values. Protons on O, N and S are marked exchangeable,
/// with a solvent-dependent typical value and a wide uncertainty, and are
/// marked not observed in solvents that exchange them (D2O, CD3OD).
/// Throws ArgumentError for classes of another molecule or an unknown solvent.
NMRPRED_API std::vector<Shift> predict_h1(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                                          const ShiftOptions &options = {},
                                          std::vector<std::string> *warnings = nullptr);

/// The shifts of both nuclei of one molecule. Plain value.
struct C13H1Shifts {
  std::vector<Shift> c13;  ///< as predict_c13() gives them
  std::vector<Shift> h1;   ///< as predict_h1() gives them
  friend bool operator==(const C13H1Shifts &a, const C13H1Shifts &b) { return a.c13 == b.c13 && a.h1 == b.h1; }
};

/// predict_c13() and predict_h1() in one call, for hosts that want both
/// nuclei: the same values, methods and references, and the same warnings
/// in the same order (13C first), as the two calls one after the other.
/// The two share the work that depends on the molecule alone (ring
/// perception and pattern matching for the increment rules, the HOSE
/// environments of the lookups), which makes this cheaper than the two
/// calls. Throws what the two calls throw: ArgumentError if `classes`
/// belongs to another molecule or for an unknown solvent.
NMRPRED_API C13H1Shifts predict_c13_h1(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                                       const ShiftOptions &options = {},
                                       std::vector<std::string> *warnings = nullptr);

/// One molecule's result in predict_c13_set(). Plain value.
struct C13SetEntry {
  /// Per heavy atom (atoms [0, heavy_atom_count())): its chemical class,
  /// as compute_classes(molecule).chemical numbers it. The hydrogens' classes
  /// are not computed: 13C needs none of them, and leaving them out is much
  /// of what makes the set call cheaper (compute_classes() gives them).
  std::vector<std::uint32_t> classes;
  std::vector<Shift> shifts;          ///< predict_c13(molecule, compute_classes(molecule), tables, options)
  std::vector<std::string> warnings;  ///< what predict_c13() appends to its warnings
  /// Status::Ok, or why this molecule has no shifts (error_message says
  /// more); the other molecules of the set are predicted all the same.
  Status error = Status::Ok;
  std::string error_message;
};

/// compute_classes() and predict_c13() for every molecule of a set, in the
/// set's order: the same heavy-atom classes, values, methods, references and
/// warnings as those calls made one molecule at a time, at less cost per
/// molecule. The work runs stage by stage (equivalence classes, HOSE
/// environments, increment rules, reference lookups) over blocks of
/// molecules rather than molecule by molecule, so that each stage's code and
/// tables stay in the processor's caches while it goes through a block; the
/// classes are found, where the structure allows it, on the graph of the
/// heavy atoms alone (docs/equivalence.md). A molecule that fails
/// gets its status and message; the set goes on. Throws ArgumentError,
/// before any molecule, for an unknown solvent where the 13C tables hold
/// solvent terms.
NMRPRED_API std::vector<C13SetEntry> predict_c13_set(const std::vector<Molecule> &molecules, const Tables &tables,
                                                     const ShiftOptions &options = {});

}  // namespace nmrpred

#endif
