// Result accessors. They take no context, so they report failure by status code
// only; each still catches everything because nothing may escape the C ABI.
#include "internal.hpp"

#include <cmath>
#include <cstring>
#include <limits>
#include <new>

// The C nucleus numbers are the C++ enum values, so they convert by cast.
static_assert(NMR_NUCLEUS_13C == static_cast<int>(nmrpred::Nucleus::C13));
static_assert(NMR_NUCLEUS_1H == static_cast<int>(nmrpred::Nucleus::H1));

namespace {

const nmrpred::RecordPrediction *record_at(const nmr_result *res, size_t record) noexcept {
  if (!res || record >= res->records.size()) return nullptr;
  return &res->records[record];
}

const nmrpred::Prediction *prediction_at(const nmr_result *res, size_t record) noexcept {
  const auto *r = record_at(res, record);
  return r && r->prediction ? &*r->prediction : nullptr;
}

/// The prediction if `atom` is a valid atom of a successful record, else null.
const nmrpred::Prediction *atom_at(const nmr_result *res, size_t record, size_t atom) noexcept {
  const auto *p = prediction_at(res, record);
  return p && atom < p->molecule.atom_count() ? p : nullptr;
}

/// The shift of a valid atom, or null if it has none. The nucleus follows from
/// the element, as each element has one predicted nucleus.
const nmrpred::Shift *shift_of(const nmrpred::Prediction &p, size_t atom) noexcept {
  switch (p.molecule.atoms()[atom].atomic_number) {
    case 6: return p.shift(atom, nmrpred::Nucleus::C13);
    case 1: return p.shift(atom, nmrpred::Nucleus::H1);
    default: return nullptr;
  }
}

/// The signal if every index is valid and the nucleus is an NMR_NUCLEUS_* value, else null.
const nmrpred::Signal *signal_at(const nmr_result *res, size_t record, int nucleus, size_t signal) noexcept {
  const auto *p = prediction_at(res, record);
  if (!p || (nucleus != NMR_NUCLEUS_13C && nucleus != NMR_NUCLEUS_1H)) return nullptr;
  const auto &list = p->signals(static_cast<nmrpred::Nucleus>(nucleus));
  return signal < list.size() ? &list[signal] : nullptr;
}

int copy_out(const std::string &json, char **json_out) noexcept {
  char *s = new (std::nothrow) char[json.size() + 1];
  if (!s) return NMR_ERR_NOMEM;
  std::memcpy(s, json.c_str(), json.size() + 1);
  *json_out = s;
  return NMR_OK;
}

}  // namespace

extern "C" {

void nmr_result_free(nmr_result *res) { delete res; }

const char *nmr_result_tables_version(const nmr_result *res) { return res ? res->tables_version.c_str() : ""; }

size_t nmr_result_record_count(const nmr_result *res) { return res ? res->records.size() : 0; }

size_t nmr_result_failed_count(const nmr_result *res) { return res ? res->failed : 0; }

int nmr_result_record_status(const nmr_result *res, size_t record) {
  const auto *r = record_at(res, record);
  return r ? static_cast<int>(r->status) : NMR_ERR_ARGUMENT;
}

const char *nmr_result_record_error(const nmr_result *res, size_t record) {
  if (!res) return "no result (res is NULL)";
  const auto *r = record_at(res, record);
  if (!r) return "record index out of range";
  return r->error.c_str();
}

const char *nmr_result_record_title(const nmr_result *res, size_t record) {
  const auto *r = record_at(res, record);
  return r ? r->title.c_str() : "";
}

size_t nmr_result_warning_count(const nmr_result *res, size_t record) {
  const auto *r = record_at(res, record);
  return r ? r->warnings().size() : 0;
}

const char *nmr_result_warning(const nmr_result *res, size_t record, size_t warning) {
  const auto *r = record_at(res, record);
  if (!r || warning >= r->warnings().size()) return nullptr;
  return r->warnings()[warning].c_str();
}

size_t nmr_result_atom_count(const nmr_result *res, size_t record) {
  const auto *p = prediction_at(res, record);
  return p ? p->molecule.atom_count() : 0;
}

size_t nmr_result_heavy_atom_count(const nmr_result *res, size_t record) {
  const auto *p = prediction_at(res, record);
  return p ? p->molecule.heavy_atom_count() : 0;
}

size_t nmr_result_class_count(const nmr_result *res, size_t record) {
  const auto *p = prediction_at(res, record);
  return p ? p->classes.chemical_count : 0;
}

size_t nmr_result_topological_class_count(const nmr_result *res, size_t record) {
  const auto *p = prediction_at(res, record);
  return p ? p->classes.topological_count : 0;
}

int nmr_result_atom_element(const nmr_result *res, size_t record, size_t atom, int *atomic_number_out,
                            const char **symbol_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p) return NMR_ERR_ARGUMENT;
  const unsigned z = p->molecule.atoms()[atom].atomic_number;
  if (atomic_number_out) *atomic_number_out = static_cast<int>(z);
  if (symbol_out) *symbol_out = nmrpred::Molecule::element_symbol(z);
  return NMR_OK;
}

int nmr_result_atom_isotope(const nmr_result *res, size_t record, size_t atom, int *mass_number_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p || !mass_number_out) return NMR_ERR_ARGUMENT;
  *mass_number_out = p->molecule.atoms()[atom].isotope;
  return NMR_OK;
}

int nmr_result_atom_charge(const nmr_result *res, size_t record, size_t atom, int *charge_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p || !charge_out) return NMR_ERR_ARGUMENT;
  *charge_out = p->molecule.atoms()[atom].formal_charge;
  return NMR_OK;
}

int nmr_result_atom_attached_to(const nmr_result *res, size_t record, size_t atom, ptrdiff_t *heavy_atom_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p || !heavy_atom_out) return NMR_ERR_ARGUMENT;
  try {
    const auto &m = p->molecule;
    const std::int64_t a = m.attached_to(atom);
    *heavy_atom_out = (a < 0 || m.is_hydrogen(static_cast<size_t>(a))) ? -1 : static_cast<ptrdiff_t>(a);
    return NMR_OK;
  } catch (...) {
    return NMR_ERR_INTERNAL;
  }
}

int nmr_result_atom_class(const nmr_result *res, size_t record, size_t atom, size_t *class_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p || !class_out || atom >= p->classes.chemical.size()) return NMR_ERR_ARGUMENT;
  *class_out = p->classes.chemical[atom];
  return NMR_OK;
}

int nmr_result_atom_topological_class(const nmr_result *res, size_t record, size_t atom, size_t *class_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p || !class_out || atom >= p->classes.topological.size()) return NMR_ERR_ARGUMENT;
  *class_out = p->classes.topological[atom];
  return NMR_OK;
}

int nmr_result_atom_hose(const nmr_result *res, size_t record, size_t atom, const char **hose_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p || !hose_out || atom >= p->hose.size()) return NMR_ERR_ARGUMENT;
  *hose_out = p->hose[atom].c_str();
  return NMR_OK;
}

int nmr_result_atom_shift(const nmr_result *res, size_t record, size_t atom, double *ppm_out,
                          double *uncertainty_ppm_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p) return NMR_ERR_ARGUMENT;
  const auto *s = shift_of(*p, atom);
  const double nan = std::numeric_limits<double>::quiet_NaN();
  if (ppm_out) *ppm_out = s ? s->ppm : nan;
  if (uncertainty_ppm_out) *uncertainty_ppm_out = s ? s->uncertainty_ppm : nan;
  return NMR_OK;
}

int nmr_result_atom_shift_method(const nmr_result *res, size_t record, size_t atom, const char **method_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p || !method_out) return NMR_ERR_ARGUMENT;
  const auto *s = shift_of(*p, atom);
  *method_out = s ? s->method.c_str() : "";
  return NMR_OK;
}

int nmr_result_atom_shift_reference_count(const nmr_result *res, size_t record, size_t atom, size_t *count_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p || !count_out) return NMR_ERR_ARGUMENT;
  const auto *s = shift_of(*p, atom);
  *count_out = s ? s->references.size() : 0;
  return NMR_OK;
}

int nmr_result_atom_shift_reference(const nmr_result *res, size_t record, size_t atom, size_t i,
                                    const char **id_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p || !id_out) return NMR_ERR_ARGUMENT;
  const auto *s = shift_of(*p, atom);
  if (!s || i >= s->references.size()) return NMR_ERR_ARGUMENT;
  *id_out = s->references[i].data();  // NUL-terminated (ReferenceIds)
  return NMR_OK;
}

int nmr_result_atom_exchangeable(const nmr_result *res, size_t record, size_t atom, int *exchangeable_out,
                                 int *observed_out) {
  const auto *p = atom_at(res, record, atom);
  if (!p) return NMR_ERR_ARGUMENT;
  const auto *s = shift_of(*p, atom);
  const bool proton = s && s->nucleus == nmrpred::Nucleus::H1;
  if (exchangeable_out) *exchangeable_out = proton && s->exchangeable ? 1 : 0;
  if (observed_out) *observed_out = proton && !s->observed ? 0 : 1;
  return NMR_OK;
}

const char *nmr_result_solvent(const nmr_result *res, size_t record) {
  const auto *p = prediction_at(res, record);
  return p ? p->solvent.name.c_str() : "";
}

size_t nmr_result_signal_count(const nmr_result *res, size_t record, int nucleus) {
  const auto *p = prediction_at(res, record);
  if (!p || (nucleus != NMR_NUCLEUS_13C && nucleus != NMR_NUCLEUS_1H)) return 0;
  return p->signals(static_cast<nmrpred::Nucleus>(nucleus)).size();
}

int nmr_result_signal_shift(const nmr_result *res, size_t record, int nucleus, size_t signal, double *ppm_out,
                            double *uncertainty_ppm_out) {
  const auto *g = signal_at(res, record, nucleus, signal);
  if (!g) return NMR_ERR_ARGUMENT;
  if (ppm_out) *ppm_out = g->ppm;
  if (uncertainty_ppm_out) *uncertainty_ppm_out = g->uncertainty_ppm;
  return NMR_OK;
}

int nmr_result_signal_attached_h(const nmr_result *res, size_t record, int nucleus, size_t signal,
                                 int *count_out) {
  const auto *g = signal_at(res, record, nucleus, signal);
  if (!g || !count_out) return NMR_ERR_ARGUMENT;
  *count_out = g->attached_h;
  return NMR_OK;
}

int nmr_result_signal_integral(const nmr_result *res, size_t record, int nucleus, size_t signal, int *count_out) {
  const auto *g = signal_at(res, record, nucleus, signal);
  if (!g || !count_out) return NMR_ERR_ARGUMENT;
  *count_out = g->count;
  return NMR_OK;
}

int nmr_result_signal_exchangeable(const nmr_result *res, size_t record, int nucleus, size_t signal,
                                   int *exchangeable_out) {
  const auto *g = signal_at(res, record, nucleus, signal);
  if (!g || !exchangeable_out) return NMR_ERR_ARGUMENT;
  *exchangeable_out = g->exchangeable ? 1 : 0;
  return NMR_OK;
}

int nmr_result_signal_method(const nmr_result *res, size_t record, int nucleus, size_t signal,
                             const char **method_out) {
  const auto *g = signal_at(res, record, nucleus, signal);
  if (!g || !method_out) return NMR_ERR_ARGUMENT;
  *method_out = g->method.c_str();
  return NMR_OK;
}

size_t nmr_result_signal_atom_count(const nmr_result *res, size_t record, int nucleus, size_t signal) {
  const auto *g = signal_at(res, record, nucleus, signal);
  return g ? g->atoms.size() : 0;
}

int nmr_result_signal_atom(const nmr_result *res, size_t record, int nucleus, size_t signal, size_t i,
                           size_t *atom_out) {
  const auto *g = signal_at(res, record, nucleus, signal);
  if (!g || !atom_out || i >= g->atoms.size()) return NMR_ERR_ARGUMENT;
  *atom_out = g->atoms[i];
  return NMR_OK;
}

int nmr_result_to_json(const nmr_result *res, char **json_out) {
  if (!res || !json_out) return NMR_ERR_ARGUMENT;
  try {
    return copy_out(nmrpred::to_json(res->records), json_out);
  } catch (const std::bad_alloc &) {
    return NMR_ERR_NOMEM;
  } catch (...) {
    return NMR_ERR_INTERNAL;
  }
}

int nmr_result_record_to_json(const nmr_result *res, size_t record, char **json_out) {
  const auto *r = record_at(res, record);
  if (!r || !json_out) return NMR_ERR_ARGUMENT;
  try {
    return copy_out(nmrpred::to_json(*r), json_out);
  } catch (const std::bad_alloc &) {
    return NMR_ERR_NOMEM;
  } catch (...) {
    return NMR_ERR_INTERNAL;
  }
}

void nmr_string_free(char *s) { delete[] s; }

}  // extern "C"

namespace {

const nmrpred::Coupling *coupling_at(const nmr_result *res, size_t record, size_t i) noexcept {
  const auto *p = prediction_at(res, record);
  return p && i < p->couplings.size() ? &p->couplings[i] : nullptr;
}

}  // namespace

extern "C" {

size_t nmr_result_coupling_count(const nmr_result *res, size_t record) {
  const auto *p = prediction_at(res, record);
  return p ? p->couplings.size() : 0;
}

int nmr_result_coupling(const nmr_result *res, size_t record, size_t i, size_t *atom_a_out, size_t *atom_b_out,
                        double *j_hz_out) {
  const auto *c = coupling_at(res, record, i);
  if (!c) return NMR_ERR_ARGUMENT;
  if (atom_a_out) *atom_a_out = c->a;
  if (atom_b_out) *atom_b_out = c->b;
  if (j_hz_out) *j_hz_out = c->j_hz;
  return NMR_OK;
}

int nmr_result_coupling_detail(const nmr_result *res, size_t record, size_t i, int *bonds_out,
                               double *uncertainty_hz_out, const char **rule_out) {
  const auto *c = coupling_at(res, record, i);
  if (!c) return NMR_ERR_ARGUMENT;
  if (bonds_out) *bonds_out = c->bonds;
  if (uncertainty_hz_out) *uncertainty_hz_out = c->uncertainty_hz;
  if (rule_out) *rule_out = c->rule.c_str();
  return NMR_OK;
}

int nmr_result_signal_multiplicity(const nmr_result *res, size_t record, int nucleus, size_t signal,
                                   const char **multiplicity_out) {
  const auto *g = signal_at(res, record, nucleus, signal);
  if (!g || !multiplicity_out) return NMR_ERR_ARGUMENT;
  *multiplicity_out = g->multiplicity.c_str();
  return NMR_OK;
}

size_t nmr_result_signal_j_count(const nmr_result *res, size_t record, int nucleus, size_t signal) {
  const auto *g = signal_at(res, record, nucleus, signal);
  return g ? g->j_hz.size() : 0;
}

int nmr_result_signal_j(const nmr_result *res, size_t record, int nucleus, size_t signal, size_t i,
                        double *j_hz_out) {
  const auto *g = signal_at(res, record, nucleus, signal);
  if (!g || !j_hz_out || i >= g->j_hz.size()) return NMR_ERR_ARGUMENT;
  *j_hz_out = g->j_hz[i];
  return NMR_OK;
}

size_t nmr_result_signal_line_count(const nmr_result *res, size_t record, int nucleus, size_t signal) {
  const auto *g = signal_at(res, record, nucleus, signal);
  return g ? g->lines.size() : 0;
}

int nmr_result_signal_lines(const nmr_result *res, size_t record, int nucleus, size_t signal, double *ppm_out,
                            double *hz_out, double *intensity_out, size_t capacity) {
  const auto *g = signal_at(res, record, nucleus, signal);
  if (!g || capacity < g->lines.size()) return NMR_ERR_ARGUMENT;
  for (std::size_t i = 0; i < g->lines.size(); ++i) {
    if (ppm_out) ppm_out[i] = g->lines[i].ppm;
    if (hz_out) hz_out[i] = g->lines[i].hz;
    if (intensity_out) intensity_out[i] = g->lines[i].intensity;
  }
  return NMR_OK;
}

}  // extern "C"
