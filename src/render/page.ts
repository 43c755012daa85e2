import { CAUTIONS } from '../schema/cautions.js';
import { escapeHtml } from './html.js';

/**
 * The reviewer page served at GET /: paste a proposal, run optimize or stress, read the result.
 * One self-contained document (inline CSS and script, no external resources) so it works
 * offline and behind strict proxies. The script builds every result node with textContent,
 * never innerHTML, so nothing the API returns can inject markup; the stress report arrives as
 * server-rendered HTML and is shown in a sandboxed frame that may not run scripts.
 *
 * Stable element ids for tests and scripts: #proposal, #load-demo, #run-optimize, #run-stress,
 * #status, #errors, #result, #cautions.
 */

const PAGE_CSS = `
:root { --ink: #1d2433; --muted: #566176; --line: #d7dce5; --soft: #f4f6fa; --accent: #1f4e8c; --bad: #a4262c; }
* { box-sizing: border-box; }
body { margin: 0; font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif; color: var(--ink); background: #fff; }
.wrap { max-width: 1160px; margin: 0 auto; padding: 20px; }
header h1 { margin: 0; font-size: 1.5rem; }
header p { margin: 2px 0 0; color: var(--muted); }
.cautions { border: 1px solid #e2c27a; background: #fff8e6; border-radius: 6px; padding: 10px 16px; margin: 14px 0; }
.cautions h2 { margin: 0 0 4px; font-size: 1rem; }
.cautions ul { margin: 0; padding-left: 20px; }
label { font-weight: 600; display: block; margin: 12px 0 2px; }
.help { margin: 0 0 6px; color: var(--muted); font-size: 0.9rem; }
textarea { width: 100%; min-height: 260px; font: 13px/1.4 ui-monospace, SFMono-Regular, Menlo, Consolas, monospace; padding: 8px; border: 1px solid #9aa4b5; border-radius: 6px; resize: vertical; }
textarea:focus, button:focus-visible { outline: 3px solid #7aa7e0; outline-offset: 1px; }
.actions { display: flex; flex-wrap: wrap; gap: 10px; align-items: center; margin: 10px 0; }
button { font: inherit; padding: 7px 16px; border-radius: 6px; border: 1px solid #9aa4b5; background: var(--soft); color: var(--ink); cursor: pointer; }
button.primary { background: var(--accent); border-color: var(--accent); color: #fff; }
button:disabled { opacity: 0.6; cursor: progress; }
#status { color: var(--muted); }
#errors { border: 1px solid #e0a3a6; background: #fcf0f0; border-radius: 6px; padding: 10px 16px; margin: 12px 0; }
#errors h2 { margin: 0 0 4px; font-size: 1rem; color: var(--bad); }
#errors ul { margin: 4px 0 0; padding-left: 20px; }
#errors code { font: 13px ui-monospace, Menlo, Consolas, monospace; }
#result h2 { font-size: 1.15rem; margin: 18px 0 6px; }
#result iframe { width: 100%; min-height: 600px; border: 1px solid var(--line); border-radius: 6px; }
.table-wrap { overflow-x: auto; }
table { border-collapse: collapse; font-size: 0.9rem; margin: 6px 0; }
caption { text-align: left; color: var(--muted); padding-bottom: 4px; }
th, td { padding: 4px 10px; border-bottom: 1px solid var(--line); text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
th:first-child, td:first-child { text-align: left; }
thead th { background: var(--soft); }
tbody th { font-weight: normal; }
tr.metric th, tr.metric td { background: #fafbfd; }
.note { color: var(--muted); font-size: 0.9rem; }
footer { margin-top: 28px; color: var(--muted); font-size: 0.85rem; }
footer a { color: var(--accent); }
`;

/**
 * Client code, kept to plain ES2017 DOM calls so it runs in any current browser without a
 * build step. It must not contain a backtick, `${` or a closing script tag.
 */
const PAGE_SCRIPT = String.raw`
(function () {
  'use strict';
  var byId = function (id) { return document.getElementById(id); };
  var proposal = byId('proposal');
  var errors = byId('errors');
  var result = byId('result');
  var status = byId('status');
  var buttons = [byId('load-demo'), byId('run-optimize'), byId('run-stress')];

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
  function clearErrors() {
    errors.hidden = true;
    errors.textContent = '';
  }
  function showErrors(title, detail, items) {
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
      showErrors('There is no proposal to send', 'Paste a proposal as JSON, or press "Load demo".', []);
      return null;
    }
    try {
      JSON.parse(text);
    } catch (e) {
      showErrors('The proposal is not valid JSON', e && e.message ? e.message : String(e), []);
      return null;
    }
    return text;
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

  function post(path, body, accept) {
    return fetch(path, { method: 'POST', headers: { 'content-type': 'application/json', accept: accept }, body: body });
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

  function renderOptimize(data) {
    result.textContent = '';
    result.appendChild(el('h2', 'Optimum of each method on the unperturbed inputs'));
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
      result.appendChild(el('h2', 'Warnings'));
      var list = el('ul');
      warnings.forEach(function (text) { list.appendChild(el('li', text)); });
      result.appendChild(list);
    }
  }

  var reportUrl = null;
  function renderReport(html) {
    result.textContent = '';
    result.appendChild(el('h2', 'Stress result'));
    var download = el('a', 'Download this report (HTML)');
    download.id = 'download-report';
    if (reportUrl) URL.revokeObjectURL(reportUrl);
    reportUrl = URL.createObjectURL(new Blob([html], { type: 'text/html' }));
    download.href = reportUrl;
    download.download = 'wobble-report.html';
    var p = el('p', null, 'note');
    p.appendChild(download);
    result.appendChild(p);
    var frame = document.createElement('iframe');
    frame.id = 'report-frame';
    frame.title = 'Robustness report';
    // No allow-scripts: the report needs none. allow-same-origin lets this page size the frame.
    frame.setAttribute('sandbox', 'allow-same-origin');
    frame.addEventListener('load', function () {
      var doc = frame.contentDocument;
      if (doc && doc.documentElement) frame.style.height = (doc.documentElement.scrollHeight + 24) + 'px';
    });
    frame.srcdoc = html;
    result.appendChild(frame);
  }

  function runOptimize() {
    clearErrors();
    var body = readProposal();
    if (body === null) return;
    setBusy('Optimizing…');
    post('/v1/optimize', body, 'application/json')
      .then(function (response) {
        if (!response.ok) return showProblem(response);
        return response.json().then(function (data) {
          renderOptimize(data);
          status.textContent = 'Optimum ready.';
        });
      })
      .catch(function (e) { showNetworkError('reach the service', e); })
      .then(function () { setBusy(''); });
  }

  function runStress() {
    clearErrors();
    var body = readProposal();
    if (body === null) return;
    setBusy('Resampling and re-optimising… this can take a few seconds.');
    post('/v1/stress?format=html', body, 'text/html')
      .then(function (response) {
        if (!response.ok) return showProblem(response);
        return response.text().then(function (html) {
          renderReport(html);
          status.textContent = 'Report ready.';
        });
      })
      .catch(function (e) { showNetworkError('reach the service', e); })
      .then(function () { setBusy(''); });
  }

  byId('load-demo').addEventListener('click', loadDemo);
  byId('run-optimize').addEventListener('click', runOptimize);
  byId('run-stress').addEventListener('click', runStress);
  proposal.addEventListener('keydown', function (e) {
    if (e.key === 'Enter' && (e.ctrlKey || e.metaKey)) { e.preventDefault(); runStress(); }
  });
})();
`;

export function renderPage(): string {
  const cautions = CAUTIONS.map((c) => `<li>${escapeHtml(c)}</li>`).join('');
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>wobble · allocation robustness</title>
<style>${PAGE_CSS}</style>
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
<p class="help" id="proposal-help">Assets, proposed weights, the inputs they were built from and the method used. The format is described by <a href="/v1/schemas/proposal">the proposal schema</a>. Ctrl+Enter runs Stress.</p>
<textarea id="proposal" name="proposal" spellcheck="false" autocomplete="off" aria-describedby="proposal-help" placeholder='{ "assets": [...], "weights": [...], "inputs": {...}, "method": {...} }'></textarea>
<div class="actions">
<button type="button" id="load-demo">Load demo</button>
<button type="button" id="run-optimize">Optimize</button>
<button type="button" id="run-stress" class="primary">Stress</button>
<span id="status" role="status" aria-live="polite"></span>
</div>
</form>
<section id="errors" role="alert" tabindex="-1" hidden></section>
<section id="result" aria-live="polite" aria-busy="false"></section>
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
