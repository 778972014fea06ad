#include "libseq/version.hpp"

#include "build_info.hpp"

namespace libseq {

std::string version() { return LIBSEQ_VERSION_STRING; }

std::string git_commit() { return LIBSEQ_GIT_COMMIT_STRING; }

}  // namespace libseq
