#pragma once
// Private to the report: the inline style sheet and script of the HTML report.

#include <string>

namespace libseq::pipeline::detail {

/// The report's style sheet (inline in <style>).
const std::string& report_css();

/// The report's script (inline at the end of <body>): the site filter, the lead selector, opening a site section
/// that a link points to. It sets document.body.dataset.ready to "ok" when it finished, or to "error: <message>".
const std::string& report_script();

}  // namespace libseq::pipeline::detail
