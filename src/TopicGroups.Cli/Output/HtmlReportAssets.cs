namespace TopicGroups.Cli.Output;

/// <summary>
/// The HTML report's inline style sheet and script. Nothing is fetched: system fonts only, no images, no external
/// scripts. The script only adds reading aids (hover and click on the map, highlighting a group); everything it
/// shows is also in the page without it, and it writes document text with textContent, never as markup.
/// </summary>
internal static class HtmlReportAssets
{
    public const string Style = """
        :root{--ink:#1f2328;--muted:#5b636b;--rule:#d8dde2;--soft:#f5f7f9;--accent:#0b5cad;--warn:#8a4b00;--warn-bg:#fff6e5}
        *{box-sizing:border-box}
        html{-webkit-text-size-adjust:100%}
        body{margin:0;color:var(--ink);background:#fff;font:16px/1.5 system-ui,-apple-system,"Segoe UI",Roboto,"Helvetica Neue",Arial,sans-serif}
        main,.top{max-width:1120px;margin:0 auto;padding:0 24px}
        .top{padding-top:28px;padding-bottom:8px;border-bottom:1px solid var(--rule)}
        h1{font-size:1.75rem;line-height:1.25;margin:0 0 4px}
        h2{font-size:1.3rem;margin:0 0 4px}
        h3{font-size:1.1rem;margin:0}
        p{margin:0 0 10px}
        a{color:var(--accent)}
        .sub{color:var(--muted);margin-bottom:14px}
        .muted{color:var(--muted)}
        .small{font-size:.875rem}
        .figures{display:flex;flex-wrap:wrap;gap:10px;margin:0 0 14px;padding:0;list-style:none}
        .figures li{border:1px solid var(--rule);border-radius:6px;padding:8px 14px;min-width:120px;background:var(--soft)}
        .figures b{display:block;font-size:1.35rem;line-height:1.2}
        .figures span{color:var(--muted);font-size:.85rem}
        nav.contents{font-size:.95rem;margin:0 0 8px}
        nav.contents a{margin-right:14px}
        section{padding:26px 0 10px;border-bottom:1px solid var(--rule)}
        section:last-of-type{border-bottom:0}
        .lead{color:var(--muted);max-width:75ch}
        .note{background:var(--warn-bg);color:var(--warn);border-left:4px solid #e0a100;padding:8px 12px;margin:10px 0;border-radius:0 4px 4px 0}
        .note.plain{background:var(--soft);color:var(--ink);border-left-color:var(--rule)}
        svg text{font-family:inherit}
        .bars{width:100%;height:auto;max-width:1000px}
        .bars a text{fill:var(--ink)}
        .bars a:hover text.label,.bars a:focus text.label{text-decoration:underline}
        .bars .bar{opacity:.85}
        .bars .mk{stroke:rgba(0,0,0,.45);stroke-width:.6}
        .map-wrap{display:grid;grid-template-columns:minmax(0,2.1fr) minmax(240px,1fr);gap:18px;align-items:start}
        @media (max-width:860px){.map-wrap{grid-template-columns:1fr}}
        .map{width:100%;height:auto;border:1px solid var(--rule);border-radius:6px;background:#fff;touch-action:manipulation}
        .map .p{stroke:rgba(0,0,0,.45);stroke-width:.6;cursor:pointer}
        .map .p.out{stroke:#000;stroke-width:1.4}
        .map .axis{stroke:#c9d0d6;stroke-width:1}
        .map .centre circle{fill:#fff;fill-opacity:.88;stroke:#333;stroke-width:1.2}
        .map .centre text{font-size:10px;font-weight:700;text-anchor:middle;dominant-baseline:central;fill:#111}
        .map .axis-label{font-size:11px;fill:var(--muted)}
        #ring{fill:none;stroke:#000;stroke-width:2;pointer-events:none}
        .panel{border:1px solid var(--rule);border-radius:6px;padding:12px 14px;background:var(--soft);min-height:160px}
        .panel-text{white-space:pre-line;overflow-wrap:anywhere;max-height:360px;overflow:auto}
        .panel-group{font-weight:600;margin-bottom:2px}
        .legend{display:flex;flex-wrap:wrap;gap:6px;margin:10px 0 0;padding:0;list-style:none}
        .legend button{font:inherit;font-size:.85rem;border:1px solid var(--rule);background:#fff;border-radius:14px;padding:2px 10px 2px 6px;cursor:pointer;color:var(--ink)}
        .legend button[aria-pressed="true"]{border-color:#333;background:#eef3f8;font-weight:600}
        .mark{width:14px;height:14px;vertical-align:-2px;margin-right:4px;overflow:visible}
        .mark use{stroke:rgba(0,0,0,.45);stroke-width:.6}
        .groups{display:grid;gap:16px;margin-top:12px}
        .group{border:1px solid var(--rule);border-radius:8px;padding:14px 16px;break-inside:avoid}
        .group header{display:flex;flex-wrap:wrap;align-items:center;gap:6px 14px;margin-bottom:8px}
        .group header .mark{width:18px;height:18px}
        .group .summary{color:var(--muted)}
        .badge{display:inline-block;font-size:.8rem;font-weight:600;border-radius:10px;padding:0 8px;border:1px solid var(--rule);background:var(--soft)}
        .badge.new{background:#e6f4ea;border-color:#9fd3ae}
        .badge.continued{background:#eef3f8;border-color:#b8cde3}
        .cols{display:grid;grid-template-columns:minmax(220px,1fr) minmax(0,2fr);gap:18px}
        @media (max-width:760px){.cols{grid-template-columns:1fr}}
        table{border-collapse:collapse;width:100%}
        th,td{text-align:left;vertical-align:top;padding:4px 8px 4px 0;border-bottom:1px solid #edf0f2}
        th{font-size:.8rem;text-transform:uppercase;letter-spacing:.03em;color:var(--muted);font-weight:600}
        td.num,th.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
        td.nowrap{white-space:nowrap}
        .terms td{padding-top:2px;padding-bottom:2px}
        .wbar{display:inline-block;height:9px;background:#8aa4bf;border-radius:2px;vertical-align:middle}
        .examples{margin:0;padding:0;list-style:none}
        .examples li{margin:0 0 8px;padding-left:10px;border-left:3px solid var(--rule)}
        .examples .meta{display:block;font-size:.8rem;color:var(--muted)}
        .figs{display:flex;flex-wrap:wrap;gap:4px 18px;margin:0 0 8px;font-size:.92rem}
        .figs dt{color:var(--muted);display:inline}
        .figs dd{display:inline;margin:0 0 0 4px;font-weight:600}
        .outliers td.text{max-width:60ch}
        .curve{width:100%;max-width:760px;height:auto}
        .curve .line{fill:none;stroke:#0072B2;stroke-width:2}
        .curve .dot{fill:#0072B2}
        .curve .chosen{fill:#D55E00}
        .curve text{font-size:11px;fill:var(--muted)}
        .curve .grid{stroke:#e6e9ec}
        .change-up{color:#0a6b2f}
        .change-down{color:#9b2c2c}
        footer{max-width:1120px;margin:0 auto;padding:16px 24px 40px;color:var(--muted);font-size:.85rem}
        .print-only{display:none}
        @media print{
          body{font-size:10.5pt}
          main,.top,footer{max-width:none;padding:0}
          nav.contents,.panel,.no-print{display:none!important}
          .legend button{border:0;padding:0 8px 0 0;background:none}
          .print-only{display:block}
          .map-wrap{display:block}
          .map{max-height:15cm}
          section{break-inside:auto;border-bottom:0;padding-top:14px}
          h2{break-after:avoid}
          .group,.figures li,tr{break-inside:avoid}
          a{color:inherit;text-decoration:none}
          .figures li{background:none}
        }
        """;

    public const string Script = """
        (function () {
          'use strict';
          var data = JSON.parse(document.getElementById('report-data').textContent);
          var map = document.getElementById('map');
          if (!map) { return; }
          var ring = document.getElementById('ring');
          var hint = document.getElementById('panel-hint');
          var body = document.getElementById('panel-body');
          var groupMark = document.getElementById('panel-mark');
          var pinned = null;

          function field(id, text) { document.getElementById(id).textContent = text; }

          function show(point) {
            var i = +point.getAttribute('data-i');
            var d = data.points[i];
            var g = data.groups[d[0]];
            field('panel-group', g.label + (g.terms ? ' \u2014 ' + g.terms : ''));
            field('panel-id', d[1]);
            field('panel-similarity', d[3].toFixed(2));
            field('panel-flag', d[4] ? 'flagged as an outlier' : '');
            field('panel-text', d[2]);
            groupMark.setAttribute('href', '#shape-' + g.s);
            groupMark.setAttribute('class', 'c' + g.c);
            hint.hidden = true;
            body.hidden = false;
            ring.setAttribute('cx', point.getAttribute('x'));
            ring.setAttribute('cy', point.getAttribute('y'));
            ring.removeAttribute('visibility');
          }

          function clear() {
            pinned = null;
            body.hidden = true;
            hint.hidden = false;
            ring.setAttribute('visibility', 'hidden');
          }

          map.addEventListener('mouseover', function (e) {
            var point = e.target.closest ? e.target.closest('.p') : null;
            if (point && pinned === null) { show(point); }
          });
          map.addEventListener('mouseleave', function () { if (pinned === null) { clear(); } });
          map.addEventListener('click', function (e) {
            var point = e.target.closest ? e.target.closest('.p') : null;
            if (!point) { clear(); return; }
            pinned = point;
            show(point);
          });
          document.addEventListener('keydown', function (e) { if (e.key === 'Escape') { clear(); } });

          var buttons = document.querySelectorAll('.legend button');
          Array.prototype.forEach.call(buttons, function (button) {
            button.addEventListener('click', function () {
              var g = button.getAttribute('data-g');
              var on = map.getAttribute('data-focus') !== g;
              if (on) { map.setAttribute('data-focus', g); } else { map.removeAttribute('data-focus'); }
              Array.prototype.forEach.call(buttons, function (b) {
                b.setAttribute('aria-pressed', on && b === button ? 'true' : 'false');
              });
            });
          });
          document.documentElement.classList.add('js');
        })();
        """;
}
