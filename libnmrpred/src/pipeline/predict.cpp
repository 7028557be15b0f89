#include <nmrpred/predict.hpp>

#include <exception>
#include <new>
#include <utility>

#include <fmt/format.h>

namespace nmrpred {

void validate(const PredictOptions &options) {
  if (options.hose_spheres < 1 || options.hose_spheres > kMaxHoseSpheres)
    throw ArgumentError(fmt::format("hose_spheres must be between 1 and {}, got {}", kMaxHoseSpheres,
                                    options.hose_spheres));
}

Prediction predict(const Molecule &molecule, const PredictOptions &options) {
  return predict(Molecule(molecule), options);
}

Prediction predict(Molecule &&molecule, const PredictOptions &options) {
  validate(options);
  Prediction p;
  p.molecule = std::move(molecule);
  p.classes = compute_classes(p.molecule);
  p.hose = hose_codes(p.molecule, p.classes, options.hose_spheres);
  if (p.hose.size() != p.molecule.atom_count())
    throw InternalError(fmt::format("hose_codes returned {} codes for {} atoms", p.hose.size(),
                                    p.molecule.atom_count()));
  p.warnings = p.classes.notes;
  return p;
}

RecordPrediction predict_record(ReadRecord record, const PredictOptions &options) {
  validate(options);
  RecordPrediction out;
  out.record = record.record;
  out.title = std::move(record.title);
  if (record.status != Status::Ok || !record.molecule) {
    out.status = record.status != Status::Ok ? record.status : Status::Internal;
    out.error = record.status != Status::Ok ? std::move(record.error)
                                            : std::string("reader returned neither a molecule nor an error");
    out.failure_warnings = std::move(record.warnings);
    return out;
  }
  if (out.title.empty()) out.title = record.molecule->title();
  // A batch must survive one record that a later stage rejects, so failures are
  // turned into the record's status here; out-of-memory still propagates because
  // carrying on would only fail again.
  try {
    Prediction p = predict(std::move(*record.molecule), options);
    p.warnings.insert(p.warnings.begin(), std::make_move_iterator(record.warnings.begin()),
                      std::make_move_iterator(record.warnings.end()));
    out.prediction = std::move(p);
  } catch (const Error &e) {
    out.status = e.status();
    out.error = e.what();
    out.failure_warnings = std::move(record.warnings);
  } catch (const std::bad_alloc &) {
    throw;
  } catch (const std::exception &e) {
    out.status = Status::Internal;
    out.error = fmt::format("internal error (please report): {}", e.what());
    out.failure_warnings = std::move(record.warnings);
  }
  return out;
}

std::vector<RecordPrediction> predict_all(std::string_view text, Format format, const PredictOptions &options) {
  validate(options);
  std::vector<ReadRecord> records = read_records(text, format);
  std::vector<RecordPrediction> out;
  out.reserve(records.size());
  for (auto &r : records) out.push_back(predict_record(std::move(r), options));
  return out;
}

}  // namespace nmrpred
