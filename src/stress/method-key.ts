import type { MethodSpec } from '../schema/proposal.js';

/** A method's label with its parameters, so two specs of one name stay apart (e.g. "kelly (fraction 0.5)"). */
export function methodKey(spec: MethodSpec): string {
  const params = Object.entries(spec)
    .filter(([k]) => k !== 'name')
    .sort(([a], [b]) => a.localeCompare(b))
    .map(([k, v]) => `${k} ${typeof v === 'object' ? JSON.stringify(v) : String(v)}`);
  return params.length === 0 ? spec.name : `${spec.name} (${params.join(', ')})`;
}
