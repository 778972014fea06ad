#include "pipeline/report_assets_impl.hpp"

namespace libseq::pipeline::detail {

const std::string& report_css() {
  static const std::string css = R"css(
:root { --ink: #1d2733; --muted: #5f6670; --paper: #fbfaf7; --rule: #dedbd2; --accent: #0f7c86;
        --best: #d9efe9; --caution-bg: #fff3d6; --caution-edge: #d08a00; }
* { box-sizing: border-box; }
[hidden] { display: none !important; }
body { margin: 0 auto; max-width: 1180px; padding: 0 20px 40px; background: var(--paper); color: var(--ink);
       font: 14px/1.45 system-ui, "DejaVu Sans", sans-serif; }
h1 { font-size: 1.7em; margin: 22px 0 6px; }
h2 { font-size: 1.25em; margin: 0; display: inline; }
h3 { font-size: 1.05em; margin: 18px 0 6px; color: var(--muted); text-transform: uppercase; letter-spacing: .04em; }
nav h2, section h2 { display: block; margin: 26px 0 8px; }
.summary { max-width: 70em; }
.caution { border-left: 6px solid var(--caution-edge); background: var(--caution-bg); padding: 10px 14px;
           font-weight: 600; margin: 14px 0; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 2px 14px; margin: 8px 0; }
dl.facts dt { color: var(--muted); }
dl.facts dd { margin: 0; }
details.provenance { margin: 8px 0; }
details > summary { cursor: pointer; }
pre { background: #f1efe9; padding: 8px; overflow-x: auto; font-size: 12px; }
table { border-collapse: collapse; margin: 6px 0 12px; font-size: 13px; }
caption { caption-side: top; text-align: left; color: var(--muted); padding: 4px 0; }
th, td { padding: 3px 9px; border-bottom: 1px solid var(--rule); text-align: left; vertical-align: top; }
thead th { border-bottom: 2px solid var(--ink); font-weight: 600; }
tbody + tbody { border-top: 2px solid var(--rule); }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
td.best { background: var(--best); font-weight: 700; }
td.hash { font-family: "DejaVu Sans Mono", monospace; font-size: 11px; word-break: break-all; }
.name { color: var(--muted); font-size: 12px; }
.filter input { font: inherit; padding: 4px 8px; min-width: 18em; border: 1px solid #b9b6ad; border-radius: 3px; }
#runnel-filter-count { color: var(--muted); margin-left: 8px; }
details.site { border-top: 1px solid var(--rule); padding: 10px 0; }
details.site > summary { padding: 4px 0; }
.where, .note, .empty { color: var(--muted); }
figure { margin: 6px 0; }
figcaption { color: var(--muted); font-size: 12px; }
.pair { display: grid; grid-template-columns: repeat(auto-fit, minmax(420px, 1fr)); gap: 12px; }
svg.chart { width: 100%; height: auto; font: 11px system-ui, "DejaVu Sans", sans-serif; background: #fff; }
svg.chart .chart-title { font-size: 13px; font-weight: 600; fill: var(--ink); }
svg.chart .grid line { stroke: #ebe8e0; stroke-width: 1; }
svg.chart .frame { fill: none; stroke: #b9b6ad; }
svg.chart .tick, svg.chart .legend text { fill: var(--muted); }
svg.chart .axis-label { fill: var(--ink); }
footer { margin-top: 30px; color: var(--muted); font-size: 12px; }
)css";
  return css;
}

const std::string& report_script() {
  static const std::string script = R"js(
(function () {
  'use strict';
  try {
    var filter = document.getElementById('runnel-filter');
    var counter = document.getElementById('runnel-filter-count');
    var keyed = Array.prototype.slice.call(document.querySelectorAll('[data-key]'));
    var total = document.querySelectorAll('tbody[data-key]').length;
    function apply() {
      var wanted = filter.value.trim().toLowerCase();
      var shown = 0;
      keyed.forEach(function (element) {
        var hit = wanted === '' || element.getAttribute('data-key').indexOf(wanted) !== -1;
        element.hidden = !hit;
        if (hit && element.tagName === 'TBODY') shown += 1;
      });
      counter.textContent = shown + ' of ' + total + ' sites';
    }
    filter.addEventListener('input', apply);
    apply();

    Array.prototype.forEach.call(document.querySelectorAll('select.lead-select'), function (select) {
      var figures = select.closest('details.site').querySelectorAll('figure[data-lead]');
      function show() {
        Array.prototype.forEach.call(figures, function (figure) {
          figure.hidden = figure.getAttribute('data-lead') !== select.value;
        });
      }
      select.addEventListener('change', show);
      show();
    });

    function openLinkedSite() {
      if (location.hash.length < 2) return;
      var target = document.getElementById(decodeURIComponent(location.hash.slice(1)));
      if (target && target.tagName === 'DETAILS') target.open = true;
    }
    window.addEventListener('hashchange', openLinkedSite);
    openLinkedSite();
    document.body.dataset.ready = 'ok';
  } catch (error) {
    document.body.dataset.ready = 'error: ' + error.message;
  }
})();
)js";
  return script;
}

}  // namespace libseq::pipeline::detail
