#ifndef NMRPRED_SRC_IO_DETECT_HPP
#define NMRPRED_SRC_IO_DETECT_HPP

#include <string_view>
#include <vector>

#include <nmrpred/io.hpp>

namespace nmrpred::io::detail {

// Recognises the format from the first kDetectLines lines of the input (see
// detect_format in io.hpp). The line views must not contain the '\n'.
Format detect_from_lines(const std::vector<std::string_view> &lines);

}  // namespace nmrpred::io::detail

#endif
