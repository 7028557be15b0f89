#ifndef NMRPRED_SRC_IO_INCHI_SYNTAX_HPP
#define NMRPRED_SRC_IO_INCHI_SYNTAX_HPP

#include <string>
#include <string_view>

namespace nmrpred::io::detail {

// Checks the layer syntax of an InChI string before it reaches the InChI
// library, which does not survive every malformed string (a broken formula
// layer such as "C7H6C.lNO" crashed Debian's libinchi 1.03 in our tests). Returns an
// empty string if the syntax is acceptable, otherwise the problem.
std::string check_inchi_syntax(std::string_view inchi);

}  // namespace nmrpred::io::detail

#endif
