import { CAUTIONS } from '../schema/cautions.js';
import { escapeHtml, REPORT_CSS } from './html.js';

/**
 * The reviewer page served at GET /: paste, open or drop a proposal, run optimize or stress, read
 * the answer. One self-contained document (inline CSS and script, no external resources) so it
 * works offline and behind strict proxies; a hash-based Content-Security-Policy lets only that
 * script and stylesheet run. The script builds its own nodes with textContent, never innerHTML.
 * The stress report is fetched as JSON (from /v1/check when the proposal carries a policy, so
 * pass/fail shows), rendered by the service (/v1/render: the page view without the cautions box,
 * which the page shows once; the standalone HTML and markdown for download), parsed with
 * DOMParser (which runs nothing), stripped of anything active and inserted inline, so it scrolls,
 * prints and reflows with the page.
 *
 * Stable element ids for tests and scripts: #proposal, #proposal-file, #load-demo, #run-optimize,
 * #run-stress, #status, #token, #token-input, #errors, #result, #result-title, #report,
 * #download-html, #download-json, #download-markdown, #cautions.
 */

const PAGE_CSS = `
:root { --ink: #1d2433; --muted: #566176; --line: #d7dce5; --soft: #f4f6fa; --accent: #1f4e8c; --bad: #a4262c; --good: #1b6b3a; }
* { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; }
body { margin: 0; font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif; color: var(--ink); background: #fff; overflow-wrap: break-word; }
.wrap { max-width: 1160px; margin: 0 auto; padding: 20px; }
header h1 { margin: 0; font-size: 1.5rem; }
header p { margin: 2px 0 0; color: var(--muted); }
.cautions { border: 1px solid #e2c27a; background: #fff8e6; border-radius: 6px; padding: 10px 16px; margin: 14px 0; }
.cautions h2 { margin: 0 0 4px; font-size: 1rem; }
.cautions ul { margin: 0; padding-left: 20px; }
label { font-weight: 600; }
label[for="proposal"] { display: block; margin: 12px 0 2px; }
.help { margin: 0 0 6px; color: var(--muted); font-size: 0.9rem; }
textarea { display: block; width: 100%; min-height: 240px; font: 13px/1.4 ui-monospace, SFMono-Regular, Menlo, Consolas, monospace; padding: 8px; border: 1px solid #9aa4b5; border-radius: 6px; resize: vertical; }
textarea.dragging { border: 2px dashed var(--accent); background: #f3f7fc; }
textarea:focus, button:focus-visible, input:focus-visible, a:focus-visible { outline: 3px solid #7aa7e0; outline-offset: 1px; }
[tabindex="-1"]:focus { outline: 3px solid #7aa7e0; outline-offset: 2px; }
.file-row { display: flex; flex-wrap: wrap; gap: 6px 12px; align-items: center; margin: 4px 0 8px; font-size: 0.9rem; color: var(--muted); }
.file-row input[type=file] { max-width: 100%; font: inherit; }
.actions { display: flex; flex-wrap: wrap; gap: 10px; align-items: center; margin: 10px 0; }
button { font: inherit; padding: 7px 16px; border-radius: 6px; border: 1px solid #9aa4b5; background: var(--soft); color: var(--ink); cursor: pointer; }
button.primary { background: var(--accent); border-color: var(--accent); color: #fff; }
button:disabled { opacity: 0.6; cursor: progress; }
#status { color: var(--muted); }
#errors, #token { border: 1px solid #e0a3a6; background: #fcf0f0; border-radius: 6px; padding: 10px 16px; margin: 12px 0; }
#token { border-color: #9fb6d6; background: #f3f7fc; }
#errors h2, #token h2 { margin: 0 0 4px; font-size: 1rem; }
#errors h2 { color: var(--bad); }
#errors ul { margin: 4px 0 0; padding-left: 20px; }
#errors code { font: 13px ui-monospace, Menlo, Consolas, monospace; overflow-wrap: anywhere; }
#token form { display: flex; flex-wrap: wrap; gap: 8px; align-items: center; }
#token input { font: inherit; padding: 6px 8px; border: 1px solid #9aa4b5; border-radius: 6px; min-width: 0; flex: 1 1 14em; }
#result { min-width: 0; scroll-margin-top: 8px; }
#errors, #token { scroll-margin-top: 8px; }
#result > h2 { font-size: 1.25rem; margin: 22px 0 6px; }
.outcome { display: inline-block; margin-left: 8px; padding: 0 8px; border-radius: 4px; font-size: 0.95rem; vertical-align: middle; }
.outcome.pass { background: #d9efe0; color: var(--good); }
.outcome.fail { background: #f6d6d7; color: var(--bad); }
.downloads { display: flex; flex-wrap: wrap; gap: 6px 14px; align-items: center; margin: 4px 0 8px; font-size: 0.9rem; }
.downloads a { color: var(--accent); }
.table-wrap { overflow-x: auto; max-width: 100%; }
#result table { border-collapse: collapse; font-size: 0.9rem; margin: 6px 0; }
#result caption { text-align: left; color: var(--muted); padding-bottom: 4px; }
#optimize-table th, #optimize-table td { padding: 4px 10px; border-bottom: 1px solid var(--line); text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
#optimize-table th:first-child, #optimize-table td:first-child { text-align: left; }
#optimize-table thead th { background: var(--soft); }
#optimize-table tbody th { font-weight: normal; }
#optimize-table tr.metric th, #optimize-table tr.metric td { background: #fafbfd; }
.note { color: var(--muted); font-size: 0.9rem; }
footer { margin-top: 28px; color: var(--muted); font-size: 0.85rem; }
footer a { color: var(--accent); }
@media (max-width: 600px) { .wrap { padding: 12px; } textarea { min-height: 180px; } }
@media print {
  form, #token, #errors, .downloads, footer, header p { display: none !important; }
  .wrap { max-width: none; padding: 0; }
  #result > h2 { margin-top: 0; }
  .table-wrap { overflow: visible; }
  .report details > summary { list-style: none; }
}
`;

/**
 * Client code, kept to plain ES2017 DOM calls so it runs in any current browser without a
 * build step. It must not contain a backtick, `${` or a closing script tag.
 */
const PAGE_SCRIPT = String.raw`
(function () {
  'use strict';
  var TOKEN_KEY = 'wobble-token';
  var byId = function (id) { return document.getElementById(id); };
  var proposal = byId('proposal');
  var errors = byId('errors');
  var result = byId('result');
  var status = byId('status');
  var tokenBox = byId('token');
  var fileInput = byId('proposal-file');
  var buttons = [byId('load-demo'), byId('run-optimize'), byId('run-stress')];
  var downloadUrls = [];
  var retry = null;

  function el(tag, text, className) {
    var node = document.createElement(tag);
    if (text !== undefined && text !== null) node.textContent = String(text);
    if (className) node.className = className;
    return node;
  }
  function setBusy(text) {
    buttons.forEach(function (b) { b.disabled = text !== ''; });
    result.setAttribute('aria-busy', text === '' ? 'false' : 'true');
    if (text !== '') status.textContent = text;
  }
  function clearResult() {
    downloadUrls.forEach(function (u) { URL.revokeObjectURL(u); });
    downloadUrls = [];
    result.textContent = '';
  }
  function clearErrors() {
    errors.hidden = true;
    errors.textContent = '';
  }
  // A new error replaces whatever result was shown: an old report must not look like the answer to the new request.
  function showErrors(title, detail, items) {
    clearResult();
    errors.textContent = '';
    errors.appendChild(el('h2', title));
    if (detail) errors.appendChild(el('p', detail));
    if (items && items.length > 0) {
      var list = el('ul');
      items.forEach(function (item) {
        var li = el('li');
        li.appendChild(el('code', item.path || '(body)'));
        li.appendChild(document.createTextNode(': ' + item.message));
        list.appendChild(li);
      });
      errors.appendChild(list);
    }
    errors.hidden = false;
    status.textContent = 'Stopped: see the message below.';
    bringIntoView(errors, errors);
  }
  // Scroll the answer to the top of the window and move keyboard and screen-reader focus to its heading.
  function bringIntoView(block, heading) {
    block.scrollIntoView({ block: 'start' });
    heading.focus({ preventScroll: true });
  }
  function percent(x, decimals) {
    if (typeof x !== 'number' || !isFinite(x)) return 'n/a';
    var text = (x * 100).toFixed(decimals === undefined ? 1 : decimals);
    return (/^-0(\.0*)?$/.test(text) ? text.slice(1) : text) + '%';
  }
  function fixed(x, decimals) {
    return typeof x === 'number' && isFinite(x) ? x.toFixed(decimals) : 'n/a';
  }
  function methodLabel(spec) {
    if (spec.name === 'mean-variance') {
      var ra = spec.riskAversion;
      return typeof ra === 'number' ? 'mean-variance (λ = ' + ra + ')' : 'mean-variance (λf = ' + ra.factor + ', λs = ' + ra.specific + ')';
    }
    if (spec.name === 'kelly') return spec.fraction === undefined || spec.fraction === 1 ? 'kelly (full)' : 'kelly (f = ' + spec.fraction + ')';
    if (spec.name === 'risk-parity' && spec.budgets) return 'risk-parity (budgets)';
    return spec.name;
  }

  // Read the textarea; null (with an error shown) when it is empty or not JSON.
  function readProposal() {
    var text = proposal.value.trim();
    if (text === '') {
      showErrors('There is no proposal to send', 'Paste a proposal as JSON, open a file, or press "Load demo".', []);
      return null;
    }
    var parsed;
    try {
      parsed = JSON.parse(text);
    } catch (e) {
      showErrors('The proposal is not valid JSON', e && e.message ? e.message : String(e), []);
      return null;
    }
    return { text: text, hasPolicy: parsed !== null && typeof parsed === 'object' && !Array.isArray(parsed) && parsed.policy !== undefined };
  }

  // Show an error response: RFC 9457 problem details list every bad field with its JSON path.
  function showProblem(response) {
    return response.text().then(function (text) {
      var body = null;
      try { body = JSON.parse(text); } catch (e) { body = null; }
      var title = 'The service answered ' + response.status + (response.statusText ? ' ' + response.statusText : '');
      if (body && typeof body === 'object') {
        var items = Array.isArray(body.errors) ? body.errors.map(function (p) { return { path: p && p.path, message: p && p.message }; }) : [];
        showErrors(response.status + ' · ' + (body.title || title), items.length > 0 ? null : body.detail || null, items);
      } else {
        showErrors(title, text.slice(0, 500), []);
      }
    });
  }
  function showNetworkError(what, error) {
    showErrors('Could not ' + what, error && error.message ? error.message : String(error), []);
  }

  // The token lives in this tab's sessionStorage only: it is gone when the tab closes and never reaches other tabs.
  function storedToken() {
    try { return window.sessionStorage.getItem(TOKEN_KEY); } catch (e) { return null; }
  }
  function post(path, body, accept) {
    var headers = { 'content-type': 'application/json', accept: accept };
    var token = storedToken();
    if (token) headers.authorization = 'Bearer ' + token;
    return fetch(path, { method: 'POST', headers: headers, body: body });
  }
  // A 401 asks for the access token, then runs the same action again.
  function needsToken(response, again) {
    if (response.status !== 401) return false;
    retry = again;
    clearResult();
    clearErrors();
    var hadToken = storedToken() !== null;
    byId('token-message').textContent = hadToken
      ? 'The service did not accept the access token. Enter it again.'
      : 'This service needs an access token. It is kept in this tab only and sent with each request.';
    tokenBox.hidden = false;
    status.textContent = 'Waiting for an access token.';
    var input = byId('token-input');
    input.value = '';
    tokenBox.scrollIntoView({ block: 'start' });
    input.focus({ preventScroll: true });
    return true;
  }
  function submitToken(event) {
    event.preventDefault();
    var value = byId('token-input').value.trim();
    if (value === '') return;
    try { window.sessionStorage.setItem(TOKEN_KEY, value); } catch (e) { /* storage refused: the request still fails with 401 */ }
    tokenBox.hidden = true;
    var again = retry;
    retry = null;
    if (again) again();
  }

  function loadDemo() {
    clearErrors();
    setBusy('Loading the demo proposal…');
    fetch('/v1/examples/demo', { headers: { accept: 'application/json' } })
      .then(function (response) {
        if (!response.ok) return showProblem(response);
        return response.json().then(function (demo) {
          proposal.value = JSON.stringify(demo, null, 2);
          status.textContent = 'Demo proposal loaded. Press Stress or Optimize.';
        });
      })
      .catch(function (e) { showNetworkError('load the demo proposal', e); })
      .then(function () { setBusy(''); });
  }

  // A proposal from a file (picker or drag-and-drop) goes into the textarea, where it can be read and edited.
  function loadFile(file) {
    if (!file) return;
    clearErrors();
    var reader = new FileReader();
    reader.onload = function () {
      var text = String(reader.result);
      try {
        JSON.parse(text);
      } catch (e) {
        showErrors('The file ' + file.name + ' is not valid JSON', e && e.message ? e.message : String(e), []);
        return;
      }
      proposal.value = text;
      status.textContent = 'Loaded ' + file.name + '. Press Stress or Optimize.';
    };
    reader.onerror = function () { showErrors('Could not read ' + file.name, reader.error ? reader.error.message : null, []); };
    reader.readAsText(file);
  }

  function resultHeading(text) {
    var h = el('h2', text);
    h.id = 'result-title';
    h.tabIndex = -1;
    return h;
  }

  function renderOptimize(data) {
    clearResult();
    var heading = resultHeading('Optimum of each method on the unperturbed inputs');
    result.appendChild(heading);
    result.appendChild(el('p', 'No resampling: these are the weights each method picks from the inputs as given. Press Stress to see how stable they are.', 'note'));
    var methods = data.methods || [];
    var wrap = el('div', null, 'table-wrap');
    var table = el('table');
    table.id = 'optimize-table';
    table.appendChild(el('caption', 'Weights per asset (rows) and method (columns); figures annualised'));
    var head = el('thead');
    var headRow = el('tr');
    headRow.appendChild(el('th', 'Asset'));
    methods.forEach(function (m) { headRow.appendChild(el('th', methodLabel(m.method))); });
    head.appendChild(headRow);
    table.appendChild(head);
    var body = el('tbody');
    function addRow(label, values, className) {
      var tr = el('tr', null, className);
      var th = el('th', label);
      th.scope = 'row';
      tr.appendChild(th);
      values.forEach(function (v) { tr.appendChild(el('td', v)); });
      body.appendChild(tr);
    }
    (data.assets || []).forEach(function (asset, i) {
      addRow(asset, methods.map(function (m) { return percent(m.base.weights[i]); }));
    });
    addRow('Expected return', methods.map(function (m) { return percent(m.base.expectedReturn, 2); }), 'metric');
    addRow('Volatility', methods.map(function (m) { return percent(m.base.volatility, 2); }), 'metric');
    addRow('Diversification ratio', methods.map(function (m) { return fixed(m.base.diversificationRatio, 2); }), 'metric');
    addRow('Effective holdings', methods.map(function (m) { return fixed(m.base.effectiveHoldings, 1); }), 'metric');
    addRow('Converged', methods.map(function (m) { return m.base.diagnostics.converged ? 'yes' : 'no'; }), 'metric');
    table.appendChild(body);
    wrap.appendChild(table);
    result.appendChild(wrap);
    var warnings = (data.warnings || []).map(function (w) { return w.code + ': ' + w.message; });
    methods.forEach(function (m) {
      (m.base.warnings || []).forEach(function (w) { warnings.push(methodLabel(m.method) + ' — ' + w.code + ': ' + w.message); });
    });
    if (warnings.length > 0) {
      result.appendChild(el('h3', 'Warnings'));
      var list = el('ul');
      warnings.forEach(function (text) { list.appendChild(el('li', text)); });
      result.appendChild(list);
    }
    bringIntoView(result, heading);
  }

  function downloadLink(id, label, content, type, filename) {
    var url = URL.createObjectURL(new Blob([content], { type: type }));
    downloadUrls.push(url);
    var a = el('a', label);
    a.id = id;
    a.href = url;
    a.download = filename;
    return a;
  }

  // Elements and attributes a report never contains; removed as a second line of defence behind the server's escaping and this page's CSP.
  var INERT_TAGS = 'script, iframe, object, embed, link, meta, style, base, form, input, button, textarea, select';
  function inertCopy(main) {
    var holder = document.createElement('div');
    holder.className = 'report';
    holder.id = 'report';
    Array.prototype.slice.call(main.querySelectorAll(INERT_TAGS)).forEach(function (n) { n.parentNode.removeChild(n); });
    Array.prototype.slice.call(main.querySelectorAll('*')).forEach(function (n) {
      Array.prototype.slice.call(n.attributes).forEach(function (attribute) {
        var name = attribute.name.toLowerCase();
        var value = attribute.value.replace(/\s+/g, '').toLowerCase();
        if (name.indexOf('on') === 0 || name === 'style' || ((name === 'href' || name === 'src' || name === 'xlink:href') && value.indexOf('javascript:') === 0)) n.removeAttribute(attribute.name);
      });
    });
    var imported = document.importNode(main, true);
    while (imported.firstChild) holder.appendChild(imported.firstChild);
    return holder;
  }

  function renderReport(jsonText, report, embeddedHtml, standaloneHtml, markdown) {
    clearResult();
    var verdict = report.verdict;
    var heading = resultHeading('Stress result');
    if (verdict) {
      heading.appendChild(document.createTextNode(' '));
      heading.appendChild(el('span', verdict.pass ? 'policy: pass' : 'policy: FAIL', 'outcome ' + (verdict.pass ? 'pass' : 'fail')));
    }
    result.appendChild(heading);
    var downloads = el('p', null, 'downloads');
    downloads.appendChild(el('span', 'Download the report:'));
    downloads.appendChild(downloadLink('download-html', 'HTML', standaloneHtml, 'text/html', 'wobble-report.html'));
    downloads.appendChild(downloadLink('download-json', 'JSON', jsonText, 'application/json', 'wobble-report.json'));
    downloads.appendChild(downloadLink('download-markdown', 'Markdown', markdown, 'text/markdown', 'wobble-report.md'));
    var print = el('button', 'Print');
    print.type = 'button';
    print.id = 'print-report';
    print.addEventListener('click', function () { window.print(); });
    downloads.appendChild(print);
    result.appendChild(downloads);
    var doc = new DOMParser().parseFromString(embeddedHtml, 'text/html');
    var main = doc.querySelector('main');
    if (main) result.appendChild(inertCopy(main));
    bringIntoView(result, heading);
  }

  // Stress (or check, when the proposal carries a policy), then the three renderings of the same report.
  function runStress() {
    clearErrors();
    var input = readProposal();
    if (input === null) return;
    setBusy(input.hasPolicy ? 'Resampling, re-optimising and checking the policy… this can take a few seconds.' : 'Resampling and re-optimising… this can take a few seconds.');
    var call = input.hasPolicy ? post('/v1/check', '{"proposal":' + input.text + '}', 'application/json') : post('/v1/stress', input.text, 'application/json');
    call
      .then(function (response) {
        if (needsToken(response, runStress)) return;
        if (!response.ok) return showProblem(response);
        return response.text().then(function (jsonText) {
          var report = JSON.parse(jsonText);
          var render = function (query, accept) {
            return post('/v1/render?' + query, jsonText, accept).then(function (r) {
              if (!r.ok) throw new Error('rendering the report answered ' + r.status);
              return r.text();
            });
          };
          return Promise.all([render('format=html&embed=true', 'text/html'), render('format=html', 'text/html'), render('format=markdown', 'text/markdown')]).then(function (texts) {
            renderReport(jsonText, report, texts[0], texts[1], texts[2]);
            status.textContent = 'Report ready.';
          });
        });
      })
      .catch(function (e) { showNetworkError('reach the service', e); })
      .then(function () { setBusy(''); });
  }

  function runOptimize() {
    clearErrors();
    var input = readProposal();
    if (input === null) return;
    setBusy('Optimising…');
    post('/v1/optimize', input.text, 'application/json')
      .then(function (response) {
        if (needsToken(response, runOptimize)) return;
        if (!response.ok) return showProblem(response);
        return response.json().then(function (data) {
          renderOptimize(data);
          status.textContent = 'Optimum ready.';
        });
      })
      .catch(function (e) { showNetworkError('reach the service', e); })
      .then(function () { setBusy(''); });
  }

  byId('load-demo').addEventListener('click', loadDemo);
  byId('run-optimize').addEventListener('click', runOptimize);
  byId('run-stress').addEventListener('click', runStress);
  byId('token-form').addEventListener('submit', submitToken);
  fileInput.addEventListener('change', function () { loadFile(fileInput.files && fileInput.files[0]); fileInput.value = ''; });
  proposal.addEventListener('dragover', function (e) { e.preventDefault(); proposal.classList.add('dragging'); });
  proposal.addEventListener('dragleave', function () { proposal.classList.remove('dragging'); });
  proposal.addEventListener('drop', function (e) {
    e.preventDefault();
    proposal.classList.remove('dragging');
    var files = e.dataTransfer && e.dataTransfer.files;
    if (files && files.length > 0) loadFile(files[0]);
  });
  proposal.addEventListener('keydown', function (e) {
    if (e.key === 'Enter' && (e.ctrlKey || e.metaKey)) { e.preventDefault(); runStress(); }
  });
  // Printing shows every section: closed details would print as one line.
  var closedBeforePrint = [];
  window.addEventListener('beforeprint', function () {
    closedBeforePrint = Array.prototype.slice.call(result.querySelectorAll('details:not([open])'));
    closedBeforePrint.forEach(function (d) { d.open = true; });
  });
  window.addEventListener('afterprint', function () {
    closedBeforePrint.forEach(function (d) { d.open = false; });
    closedBeforePrint = [];
  });
})();
`;

/** The page's one inline stylesheet: its own rules, then the report's (scoped to `.report`). */
const PAGE_STYLE = PAGE_CSS + REPORT_CSS;

export function renderPage(): string {
  const cautions = CAUTIONS.map((c) => `<li>${escapeHtml(c)}</li>`).join('');
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>wobble · allocation robustness</title>
<style>${PAGE_STYLE}</style>
</head>
<body>
<div class="wrap">
<header>
<h1>wobble</h1>
<p>Check whether a proposed allocation expresses its views or the noise in its estimates: the inputs are resampled, every method is re-optimised, and the report shows how stable the weights and risk are.</p>
</header>
<section class="cautions" id="cautions" aria-labelledby="cautions-title">
<h2 id="cautions-title">Please read first</h2>
<ul>${cautions}</ul>
</section>
<main>
<form id="proposal-form" novalidate>
<label for="proposal">Proposal (JSON)</label>
<p class="help" id="proposal-help">Assets, proposed weights, the inputs they were built from and the method used; add a <code>policy</code> to get pass or fail. The format is described by <a href="/v1/schemas/proposal">the proposal schema</a>. Paste it, open a file or drop one on the box. Ctrl+Enter runs Stress.</p>
<div class="file-row"><label for="proposal-file">Open a JSON file:</label><input type="file" id="proposal-file" accept=".json,application/json"></div>
<textarea id="proposal" name="proposal" spellcheck="false" autocomplete="off" aria-describedby="proposal-help" placeholder='{ "assets": [...], "weights": [...], "inputs": {...}, "method": {...} }'></textarea>
<div class="actions">
<button type="button" id="load-demo">Load demo</button>
<button type="button" id="run-optimize">Optimize</button>
<button type="button" id="run-stress" class="primary">Stress</button>
<span id="status" role="status" aria-live="polite"></span>
</div>
</form>
<section id="token" aria-labelledby="token-title" hidden>
<h2 id="token-title">Access token</h2>
<p id="token-message"></p>
<form id="token-form"><label for="token-input">Token</label><input type="password" id="token-input" autocomplete="off" spellcheck="false"><button type="submit" id="token-submit" class="primary">Use token</button></form>
</section>
<section id="errors" role="alert" tabindex="-1" hidden></section>
<section id="result" aria-live="polite" aria-busy="false" aria-labelledby="result-title"></section>
</main>
<footer>
<p>API: <a href="/openapi.json">OpenAPI description</a> · <a href="/v1/schemas/report">report schema</a> · <a href="/v1/schemas/policy">policy schema</a> · <a href="/healthz">health</a></p>
</footer>
</div>
<script>${PAGE_SCRIPT}</script>
</body>
</html>
`;
}

/** base64 of the SHA-256 of a UTF-8 string (WebCrypto: the same in Workers, Node 20 and browsers). */
async function sha256Base64(text: string): Promise<string> {
  const digest = new Uint8Array(await crypto.subtle.digest('SHA-256', new TextEncoder().encode(text)));
  let binary = '';
  for (const byte of digest) binary += String.fromCharCode(byte);
  return btoa(binary);
}

let pagePolicy: Promise<string> | undefined;

/**
 * The page's Content-Security-Policy (CSP Level 3): only its own inline script and stylesheet,
 * allowed by their SHA-256 hashes, may run or apply; it may fetch only from its own origin; no
 * plugins, no forms posting elsewhere, no framing by other sites (`frame-ancestors 'none'`,
 * which only works as a header, not in a meta tag). The report is inserted as inert markup, so
 * even an escaping slip in a renderer could not run a handler: inline handlers are not allowed.
 */
export function pageContentSecurityPolicy(): Promise<string> {
  pagePolicy ??= Promise.all([sha256Base64(PAGE_SCRIPT), sha256Base64(PAGE_STYLE)]).then(
    ([script, style]) =>
      `default-src 'none'; script-src 'sha256-${script}'; style-src 'sha256-${style}'; img-src 'self' data:; connect-src 'self'; ` +
      `base-uri 'none'; form-action 'none'; frame-ancestors 'none'`,
  );
  return pagePolicy;
}

/** Headers for the page itself (the service's edge adds the rest: nosniff again, Referrer-Policy, Cache-Control). */
export async function pageSecurityHeaders(): Promise<Record<string, string>> {
  return {
    'content-security-policy': await pageContentSecurityPolicy(),
    'x-content-type-options': 'nosniff',
    'x-frame-options': 'DENY',
  };
}
