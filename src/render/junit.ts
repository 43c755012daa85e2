import type { Report } from '../schema/report.js';
import { formatPercent, formatRuleFigure, formatRuleValue, methodLabel } from './format.js';

/**
 * The verdict as JUnit XML, so a CI system shows each policy rule as a test case. There is no
 * formal JUnit XML standard; this follows the common layout that CI tools read (a <testsuite>
 * with tests/failures/errors/skipped counts, <testcase classname name>, <failure message type>,
 * <skipped>, <properties>, <system-out>) — common practice.
 */

/**
 * Escape text for XML character data and attribute values (W3C XML 1.0, 5th ed., §2.4 and
 * §3.3.3: `&` and `<` must be escaped, `"` inside double-quoted attributes, `>` after `]]`;
 * we escape all five), and drop characters XML 1.0 does not allow at all (§2.2, production
 * [2] Char: no C0 controls except tab, LF, CR; no lone surrogates; no U+FFFE/U+FFFF), which
 * no escape can represent. Tab, LF and CR in attributes are written as character references
 * so attribute-value normalisation (§3.3.3) does not turn them into spaces; in element content
 * they stay as they are. (A CR in content is still normalised to LF by parsers, §2.11.)
 */
export function escapeXml(text: string, inAttribute = true): string {
  let out = '';
  for (const ch of text) {
    const code = ch.codePointAt(0) as number;
    if (ch === '&') out += '&amp;';
    else if (ch === '<') out += '&lt;';
    else if (ch === '>') out += '&gt;';
    else if (ch === '"') out += '&quot;';
    else if (ch === "'") out += '&apos;';
    else if (ch === '\t' || ch === '\n' || ch === '\r') out += inAttribute ? `&#${code};` : ch;
    else if (isXmlChar(code)) out += ch;
    else out += '\ufffd';
  }
  return out;
}

/** W3C XML 1.0 §2.2 production [2] Char, minus tab/LF/CR which the caller handles. */
function isXmlChar(code: number): boolean {
  return (code >= 0x20 && code <= 0xd7ff) || (code >= 0xe000 && code <= 0xfffd) || (code >= 0x10000 && code <= 0x10ffff);
}

function attributes(pairs: Record<string, string | number>): string {
  return Object.entries(pairs)
    .map(([k, v]) => ` ${k}="${escapeXml(String(v))}"`)
    .join('');
}

/** Full precision beside the rounded percentage, so a CI log carries the exact figures. */
function figure(value: number | null): string {
  return value === null ? 'n/a (not estimable)' : `${formatPercent(value, 2)} (${value})`;
}

export function renderVerdictJunit(r: Report): string {
  const lines: string[] = ['<?xml version="1.0" encoding="UTF-8"?>'];
  const v = r.verdict;
  const failures = v ? v.rules.filter((rule) => !rule.pass).length : 0;
  const tests = v ? v.rules.length : 1;
  const seconds = (r.meta.elapsedMs / 1000).toFixed(3);
  lines.push(`<testsuite${attributes({ name: 'wobble', tests, failures, errors: 0, skipped: v ? 0 : 1, time: seconds })}>`);
  lines.push('  <properties>');
  const properties: [string, string][] = [
    ['proposal.method', methodLabel(r.proposal.method)],
    ['seed', String(r.meta.seed)],
    ['draws', `${r.meta.drawsCompleted} of ${r.meta.drawsRequested}`],
    ['inputDigest', r.meta.inputDigest],
    ['version', r.meta.version],
  ];
  if (v) properties.push(['confidence', String(v.confidence)]);
  for (const [name, value] of properties) lines.push(`    <property${attributes({ name, value })}/>`);
  lines.push('  </properties>');

  if (!v) {
    lines.push(`  <testcase${attributes({ classname: 'wobble', name: 'verdict', time: 0 })}>`);
    lines.push(`    <skipped${attributes({ message: 'The report has no verdict: no policy was given, so no rule was checked.' })}/>`);
    lines.push('  </testcase>');
  } else {
    for (const rule of v.rules) {
      const open = `  <testcase${attributes({ classname: rule.method, name: rule.id, time: 0 })}`;
      if (rule.pass) {
        lines.push(`${open}/>`);
        continue;
      }
      const detail = [
        `metric: ${rule.metric}`,
        `value: ${figure(rule.value)}`,
        `stdErr: ${figure(rule.stdErr)}`,
        `bound: ${figure(rule.bound)}`,
        `threshold (${rule.kind}): ${figure(rule.threshold)}`,
        ...(rule.baselineValue === undefined ? [] : [`baseline: ${figure(rule.baselineValue)}`]),
        `confidence: ${v.confidence}`,
        rule.message,
      ].join('\n');
      const message = `${rule.message} [value ${formatRuleValue(rule.metric, rule.value, rule.stdErr)}, bound ${formatRuleFigure(rule.metric, rule.bound)}, ${rule.kind} ${formatRuleFigure(rule.metric, rule.threshold)}]`;
      lines.push(`${open}>`);
      lines.push(`    <failure${attributes({ message, type: `policy.${rule.kind}` })}>${escapeXml(detail, false)}</failure>`);
      lines.push('  </testcase>');
    }
  }
  lines.push(`  <system-out>${escapeXml(['Cautions:', ...r.cautions.map((c) => `- ${c}`)].join('\n'), false)}</system-out>`);
  lines.push('</testsuite>');
  return `${lines.join('\n')}\n`;
}
