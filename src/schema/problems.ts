import type { z } from 'zod';

/** One thing wrong with a request, located by its JSON path. */
export interface Problem {
  /** Dotted path with indices, e.g. `inputs.covariance[2][1]`; `` for the whole body. */
  readonly path: string;
  /** RFC 6901 JSON Pointer to the same place, e.g. `/inputs/covariance/2/1`. */
  readonly pointer: string;
  /** What was expected and what was found. */
  readonly message: string;
  /** `limit`: over a service limit (413); `unsolvable`: well-formed but has no answer (422); else malformed (400). */
  readonly kind?: 'limit' | 'unsolvable';
}

export type PathPart = string | number;

export function formatPath(parts: readonly PathPart[]): string {
  let out = '';
  for (const p of parts) {
    if (typeof p === 'number') out += `[${p}]`;
    else out += out === '' ? p : `.${p}`;
  }
  return out;
}

export function toPointer(parts: readonly PathPart[]): string {
  return parts.map((p) => '/' + String(p).replace(/~/g, '~0').replace(/\//g, '~1')).join('');
}

export function problem(parts: readonly PathPart[], message: string, kind?: Problem['kind']): Problem {
  return kind ? { path: formatPath(parts), pointer: toPointer(parts), message, kind } : { path: formatPath(parts), pointer: toPointer(parts), message };
}

/** The HTTP status for a set of problems: 400 if anything is malformed, else 413 for limits, else 422. */
export function statusFor(problems: readonly Problem[]): 400 | 413 | 422 {
  if (problems.some((p) => p.kind === undefined)) return 400;
  if (problems.some((p) => p.kind === 'limit')) return 413;
  return 422;
}

type Issue = z.core.$ZodIssue;

/** Fields whose maximum is a service limit rather than a rule of the contract. */
const LIMITED_FIELDS = new Set(['assets', 'returns', 'draws', 'names', 'factors', 'groups']);

/**
 * Flatten zod issues into problems. For a union that failed in every branch, report the
 * branch that got furthest (fewest issues, or the one without unknown-key complaints), so the
 * caller reads "inputs.covariance[1]: expected array" rather than "invalid input".
 */
export function problemsFromZod(issues: readonly Issue[], prefix: readonly PathPart[] = []): Problem[] {
  const out: Problem[] = [];
  for (const issue of issues) {
    const path = [...prefix, ...(issue.path as PathPart[])];
    if (issue.code === 'invalid_union' && issue.errors.length > 0) {
      const best = pickUnionBranch(issue.errors as Issue[][]);
      if (best) {
        out.push(...problemsFromZod(best, path));
        continue;
      }
    }
    if (issue.code === 'unrecognized_keys') {
      for (const key of issue.keys) out.push(problem([...path, key], `unknown field "${key}" (not part of the schema; check the spelling)`));
      continue;
    }
    const overLimit = issue.code === 'too_big' && LIMITED_FIELDS.has(String(path[path.length - 1]));
    out.push(problem(path, describeIssue(issue) + (overLimit ? ' (service limit)' : ''), overLimit ? 'limit' : undefined));
  }
  return out;
}

function pickUnionBranch(branches: Issue[][]): Issue[] | undefined {
  let best: Issue[] | undefined;
  let bestScore = Infinity;
  for (const branch of branches) {
    // A branch that only complains about unknown or missing keys is the wrong branch; one that
    // recognised the keys and found bad values is what the caller meant.
    const structural = branch.filter(
      (i) => i.code === 'unrecognized_keys' || (i.code === 'invalid_type' && i.message.includes('undefined')),
    ).length;
    const score = structural * 1000 + branch.length;
    if (score < bestScore) {
      bestScore = score;
      best = branch;
    }
  }
  return best;
}

function describeIssue(issue: Issue): string {
  switch (issue.code) {
    case 'invalid_type':
      return issue.message.includes('received undefined')
        ? `required field missing (expected ${issue.expected})`
        : `expected ${issue.expected}${receivedSuffix(issue.message)}`;
    case 'too_small':
      return `${issue.origin === 'array' ? 'expected at least' : 'expected ≥'} ${String(issue.minimum)}${issue.origin === 'array' ? ' items' : ''}`;
    case 'too_big':
      return `${issue.origin === 'array' ? 'expected at most' : 'expected ≤'} ${String(issue.maximum)}${issue.origin === 'array' ? ' items' : ''}`;
    case 'invalid_value':
      return `expected one of ${issue.values.map((v) => JSON.stringify(v)).join(', ')}`;
    case 'invalid_union':
      return 'does not match any allowed form';
    default:
      return issue.message;
  }
}

function receivedSuffix(message: string): string {
  const m = /received (\w+)/.exec(message);
  return m ? `, got ${m[1]}` : '';
}
