import { describe, expect, it } from 'vitest';
import { escapeXml, renderVerdictJunit } from '../../src/render/junit.js';
import { sampleReport } from '../helpers/sample-report.js';

/**
 * A small, strict XML 1.0 well-formedness checker (no DTDs, no CDATA, no comments — the
 * renderer emits none), following W3C XML 1.0 (5th ed.): Char production [2] (§2.2),
 * character data without raw `<` or `&` (§2.4), properly nested elements with one root and
 * matching end tags (§3, WFC: Element Type Match), attribute values without raw `<` and unique
 * attribute names (§3.1, WFC: Unique Att Spec, No < in Attribute Values), and only the five
 * predefined entities or character references (§4.1, §4.6). It builds a tree for assertions.
 */
interface XmlElement {
  name: string;
  attrs: Record<string, string>;
  children: XmlElement[];
  text: string;
}

const NAME = /^[A-Za-z_:][\w.:-]*/;
const REFERENCE = /^&(amp|lt|gt|quot|apos|#[0-9]+|#x[0-9a-fA-F]+);/;
const PREDEFINED: Record<string, string> = { amp: '&', lt: '<', gt: '>', quot: '"', apos: "'" };

function decode(raw: string, where: string): string {
  let out = '';
  for (let i = 0; i < raw.length; ) {
    if (raw[i] === '<') throw new Error(`raw < in ${where}`);
    if (raw[i] === '&') {
      const m = REFERENCE.exec(raw.slice(i));
      if (!m) throw new Error(`bad reference in ${where}: ${raw.slice(i, i + 12)}`);
      const ref = m[1];
      out += ref.startsWith('#x') ? String.fromCodePoint(parseInt(ref.slice(2), 16)) : ref.startsWith('#') ? String.fromCodePoint(Number(ref.slice(1))) : PREDEFINED[ref];
      i += m[0].length;
    } else {
      out += raw[i];
      i++;
    }
  }
  return out;
}

function checkChars(text: string): void {
  for (const ch of text) {
    const c = ch.codePointAt(0)!;
    const ok = c === 0x9 || c === 0xa || c === 0xd || (c >= 0x20 && c <= 0xd7ff) || (c >= 0xe000 && c <= 0xfffd) || (c >= 0x10000 && c <= 0x10ffff);
    if (!ok) throw new Error(`character U+${c.toString(16)} is not allowed in XML 1.0`);
  }
}

function parseXml(xml: string): XmlElement {
  checkChars(xml);
  let i = 0;
  const decl = /^<\?xml version="1\.0" encoding="UTF-8"\?>\s*/.exec(xml);
  if (decl) i = decl[0].length;
  const stack: XmlElement[] = [];
  let root: XmlElement | undefined;
  while (i < xml.length) {
    if (xml.startsWith('</', i)) {
      const m = /^<\/([^\s>]+)\s*>/.exec(xml.slice(i));
      if (!m) throw new Error(`bad end tag at ${i}`);
      const open = stack.pop();
      if (!open || open.name !== m[1]) throw new Error(`end tag </${m[1]}> does not match <${open?.name}>`);
      i += m[0].length;
    } else if (xml[i] === '<') {
      const nameMatch = NAME.exec(xml.slice(i + 1));
      if (!nameMatch) throw new Error(`bad start tag at ${i}`);
      const element: XmlElement = { name: nameMatch[0], attrs: {}, children: [], text: '' };
      i += 1 + nameMatch[0].length;
      for (;;) {
        const ws = /^\s*/.exec(xml.slice(i))![0];
        i += ws.length;
        if (xml.startsWith('/>', i) || xml[i] === '>') break;
        if (ws.length === 0) throw new Error(`attributes must be separated by white space at ${i}`);
        const attr = /^([A-Za-z_:][\w.:-]*)="([^"]*)"/.exec(xml.slice(i));
        if (!attr) throw new Error(`bad attribute at ${i}: ${xml.slice(i, i + 20)}`);
        if (attr[1] in element.attrs) throw new Error(`duplicate attribute ${attr[1]}`);
        element.attrs[attr[1]] = decode(attr[2], `attribute ${attr[1]}`);
        i += attr[0].length;
      }
      const selfClosing = xml.startsWith('/>', i);
      i += selfClosing ? 2 : 1;
      if (stack.length > 0) stack[stack.length - 1].children.push(element);
      else if (root) throw new Error('more than one root element');
      else root = element;
      if (!selfClosing) stack.push(element);
    } else {
      const end = xml.indexOf('<', i);
      const raw = xml.slice(i, end < 0 ? xml.length : end);
      if (raw.includes(']]>')) throw new Error('"]]>" in character data');
      if (stack.length === 0) {
        if (raw.trim() !== '') throw new Error('text outside the root element');
      } else stack[stack.length - 1].text += decode(raw, 'character data');
      i += raw.length;
    }
  }
  if (stack.length > 0) throw new Error(`unclosed <${stack[stack.length - 1].name}>`);
  if (!root) throw new Error('no root element');
  return root;
}

describe('the test XML checker itself', () => {
  it('rejects documents that are not well-formed', () => {
    expect(() => parseXml('<a><b></a></b>')).toThrow();
    expect(() => parseXml('<a x="1" x="2"/>')).toThrow();
    expect(() => parseXml('<a>1 < 2</a>')).toThrow();
    expect(() => parseXml('<a>AT&T</a>')).toThrow();
    expect(() => parseXml('<a/><b/>')).toThrow();
    expect(() => parseXml('<a>\u0001</a>')).toThrow();
    expect(parseXml('<a x="&lt;&#65;&#x42;">&amp;</a>')).toEqual({ name: 'a', attrs: { x: '<AB' }, children: [], text: '&' });
  });
});

describe('escapeXml', () => {
  it('escapes markup characters and drops characters XML 1.0 cannot carry', () => {
    expect(escapeXml(`<a & "b" 'c'>`)).toBe('&lt;a &amp; &quot;b&quot; &apos;c&apos;&gt;');
    // U+0001 and U+FFFF are outside production [2] Char; a lone surrogate too.
    expect(escapeXml('a\u0001b\uffffc\ud800d')).toBe('a\ufffdb\ufffdc\ufffdd');
    expect(escapeXml('line\nbreak')).toBe('line&#10;break');
    expect(escapeXml('line\nbreak', false)).toBe('line\nbreak');
    expect(escapeXml('emoji 📈 stays')).toBe('emoji 📈 stays');
  });
});

describe('renderVerdictJunit', () => {
  const report = sampleReport();
  const xml = renderVerdictJunit(report);
  const suite = parseXml(xml);

  it('is well-formed XML with one <testsuite name="wobble">', () => {
    expect(xml.startsWith('<?xml version="1.0" encoding="UTF-8"?>\n')).toBe(true);
    expect(suite.name).toBe('testsuite');
    expect(suite.attrs.name).toBe('wobble');
  });

  it('has one testcase per rule (classname = method, name = rule id) and counts failures', () => {
    const rules = report.verdict!.rules;
    const cases = suite.children.filter((c) => c.name === 'testcase');
    expect(cases.map((c) => [c.attrs.classname, c.attrs.name])).toEqual(rules.map((r) => [r.method, r.id]));
    expect(suite.attrs.tests).toBe(String(rules.length));
    expect(suite.attrs.failures).toBe(String(rules.filter((r) => !r.pass).length));
    expect(suite.attrs.errors).toBe('0');
  });

  it('gives failing rules a <failure> with value, stdErr, bound and threshold, and passing rules none', () => {
    const [failing, passing] = suite.children.filter((c) => c.name === 'testcase');
    const rule = report.verdict!.rules[0];
    expect(passing.children).toEqual([]);
    expect(failing.children).toHaveLength(1);
    const failure = failing.children[0];
    expect(failure.name).toBe('failure');
    expect(failure.attrs.type).toBe('policy.max');
    expect(failure.attrs.message).toContain(rule.message);
    expect(failure.attrs.message).toContain(
      `value ${(rule.value * 100).toFixed(2)}% ± ${(rule.stdErr! * 100).toFixed(2)}%, bound ${(rule.bound * 100).toFixed(2)}%, max ${(rule.threshold * 100).toFixed(2)}%`,
    );
    expect(failure.text).toContain(`bound: ${(rule.bound * 100).toFixed(2)}% (${rule.bound})`);
    expect(failure.text).toContain(`value: ${(rule.value * 100).toFixed(2)}% (${rule.value})`);
    expect(failure.text).toContain(`stdErr: ${(rule.stdErr! * 100).toFixed(2)}% (${rule.stdErr})`);
    expect(failure.text).toContain(`threshold (max): 10.00% (0.1)`);
    expect(failure.text).toContain('confidence: 0.95');
  });

  it('carries the cautions in <system-out> and the run identity in <properties>', () => {
    const out = suite.children.find((c) => c.name === 'system-out')!;
    for (const c of report.cautions) expect(out.text).toContain(c);
    const props = Object.fromEntries(suite.children.find((c) => c.name === 'properties')!.children.map((p) => [p.attrs.name, p.attrs.value]));
    expect(props).toMatchObject({ seed: 'sample-seed', inputDigest: report.meta.inputDigest, 'proposal.method': 'mean-variance (λ = 4)', confidence: '0.95' });
  });

  it('has a single skipped testcase saying so when the report has no verdict', () => {
    const none = parseXml(renderVerdictJunit(sampleReport({ withVerdict: false })));
    const cases = none.children.filter((c) => c.name === 'testcase');
    expect(cases).toHaveLength(1);
    expect(cases[0].children[0].name).toBe('skipped');
    expect(cases[0].children[0].attrs.message).toMatch(/no verdict/);
    expect(none.attrs).toMatchObject({ tests: '1', failures: '0', skipped: '1' });
  });

  it('escapes hostile rule ids, methods and messages so the XML stays well-formed and round-trips', () => {
    const r = sampleReport();
    const hostileId = `a"b'c<d>&e]]>f\u0001g\nh`;
    r.verdict!.rules[0] = { ...r.verdict!.rules[0], id: hostileId, method: '<m>', message: 'x < y & "z"' };
    const parsed = parseXml(renderVerdictJunit(r));
    const first = parsed.children.find((c) => c.name === 'testcase')!;
    // The control character cannot be represented in XML 1.0 and becomes U+FFFD; the rest round-trips.
    expect(first.attrs.name).toBe(`a"b'c<d>&e]]>f\ufffdg\nh`);
    expect(first.attrs.classname).toBe('<m>');
    expect(first.children[0].attrs.message.startsWith('x < y & "z"')).toBe(true);
  });
});
