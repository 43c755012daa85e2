import { LIMITS, TOLERANCES } from './limits.js';
import { expandBound } from './bounds.js';
import { checkPsd, checkShape, checkSymmetric } from './matrix-checks.js';
import { problem, problemsFromZod, type Problem } from './problems.js';
import { ProposalSchema, type MethodSpec, type Proposal } from './proposal.js';
import { priceRequest, type CostOptions } from '../cost/check.js';
import { DEFAULT_DRAWS, requestShape, type Job } from '../cost/request-shape.js';
import { methodList } from '../stress/problem.js';


/** Warning code of a supplied covariance that is PSD but singular (validation's PSD test); the engine prices such requests as singular. */
export const SINGULAR_COVARIANCE_WARNING = 'singular-covariance';
export interface Warning {
  readonly code: string;
  readonly message: string;
}

export type Validation =
  | { readonly ok: true; readonly proposal: Proposal; readonly warnings: Warning[] }
  | { readonly ok: false; readonly problems: Problem[] };

/** What the validated proposal is for, so it can be priced before the costly checks. */
export interface ValidationContext extends CostOptions {
  /** The job the proposal will run (default 'validate': only validation itself is priced). */
  readonly job?: Job;
  /** Draws overriding the proposal's own (CLI --draws). */
  readonly draws?: number;
}

/**
 * Validates a parsed JSON body: shape with zod, then every cheap semantic rule, collecting all
 * problems at once; then prices the request for `context.job` (413 problems when over a limit)
 * before the costly matrix checks (positive semi-definiteness), which run only when it fits.
 */
export function validateProposal(body: unknown, context: ValidationContext = {}): Validation {
  const early = preflight(body, context);
  if (early) return { ok: false, problems: [early] };
  const parsed = ProposalSchema.safeParse(body);
  if (!parsed.success) {
    return { ok: false, problems: problemsFromZod(parsed.error.issues) };
  }
  const proposal = parsed.data;
  const problems: Problem[] = [];
  const warnings: Warning[] = [];
  const n = proposal.assets.length;

  const costly: (() => void)[] = [];
  checkAssets(proposal, problems);
  checkLength(proposal.weights, n, ['weights'], 'weights', problems);
  const singular = { found: false };
  checkInputs(proposal, problems, warnings, costly, singular);
  checkViews(proposal, problems);
  for (const [i, spec] of [proposal.method, ...(proposal.compare ?? [])].entries()) {
    checkMethod(spec, proposal, i === 0 ? ['method'] : ['compare', i - 1], problems);
  }
  checkConstraints(proposal, problems, warnings);
  checkWeights(proposal, problems, warnings);
  checkResampling(proposal, problems);

  const job = context.job ?? 'validate';
  const draws = context.draws ?? proposal.resampling?.draws ?? DEFAULT_DRAWS;
  const price = priceRequest(job, requestShape(proposal, methodList(proposal), draws), context);
  if (price.over) {
    problems.push(problem([], price.over.message, 'limit'));
    return { ok: false, problems };
  }
  for (const check of costly) check();
  if (singular.found && problems.length === 0) {
    // A singular covariance makes every dense solve slower (see work-model.ts): price it again.
    const again = priceRequest(job, requestShape(proposal, methodList(proposal), draws, true), context);
    if (again.over) return { ok: false, problems: [problem(['inputs', 'covariance'], `the covariance is singular, which makes each solve costlier: ${again.over.message}`, 'limit')] };
  }

  if (problems.length > 0) return { ok: false, problems };
  return { ok: true, proposal, warnings };
}

/**
 * Prices the raw body from its array lengths before the schema walks every number (zod takes
 * seconds on millions of numbers): a request whose shape is already over a limit is refused in
 * milliseconds. Only when the body looks like a proposal; anything odd is left to the schema.
 */
function preflight(body: unknown, context: ValidationContext): Problem | undefined {
  if (!isRecord(body) || !Array.isArray(body.assets) || !isRecord(body.inputs) || !isRecord(body.method) || typeof body.method.name !== 'string') return undefined;
  if (!Array.isArray(body.weights) || (body.compare !== undefined && !Array.isArray(body.compare))) return undefined;
  if (!body.assets.every((a) => typeof a === 'string')) return undefined;
  const inputs = body.inputs;
  const matrixOk = (m: unknown): boolean => Array.isArray(m) && m.every((row) => Array.isArray(row));
  if ('returns' in inputs ? !matrixOk(inputs.returns) : 'covariance' in inputs ? !matrixOk(inputs.covariance) || !Array.isArray(inputs.mean) : true) return undefined;
  const constraints = body.constraints;
  if (constraints !== undefined && (!isRecord(constraints) || (constraints.groups !== undefined && !(Array.isArray(constraints.groups) && constraints.groups.every((g) => isRecord(g) && Array.isArray(g.assets)))))) return undefined;
  const draws = context.draws ?? (isRecord(body.resampling) && Number.isInteger(body.resampling.draws) ? (body.resampling.draws as number) : DEFAULT_DRAWS);
  try {
    const proposal = body as unknown as Proposal;
    const price = priceRequest(context.job ?? 'validate', requestShape(proposal, methodList(proposal), draws), context);
    return price.over ? problem([], price.over.message, 'limit') : undefined;
  } catch {
    return undefined;
  }
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function checkLength(v: readonly unknown[], n: number, path: (string | number)[], what: string, out: Problem[]): boolean {
  if (v.length === n) return true;
  out.push(problem(path, `expected ${n} numbers (one per asset), got ${v.length} ${what}`));
  return false;
}

function checkAssets(p: Proposal, out: Problem[]): void {
  const seen = new Map<string, number>();
  p.assets.forEach((id, i) => {
    const first = seen.get(id);
    if (first !== undefined) out.push(problem(['assets', i], `asset ids must be unique: "${id}" already at assets[${first}]`));
    else seen.set(id, i);
  });
}

/**
 * Checks the inputs; a covariance that needs the opted-in repair gets a warning here and is
 * repaired in prepareProblem. The PSD tests go to `costly`, run after the request is priced.
 */
function checkInputs(p: Proposal, out: Problem[], warnings: Warning[], costly: (() => void)[], singular: { found: boolean }): undefined {
  const n = p.assets.length;
  const inputs = p.inputs;
  const estimation = p.estimation;
  if ('returns' in inputs) {
    const t = inputs.returns.length;
    checkShape(inputs.returns, t, n, ['inputs', 'returns'], 'returns (one column per asset)', out);
    inputs.returns.forEach((row, r) =>
      row.forEach((x, j) => {
        if (x <= -1) out.push(problem(['inputs', 'returns', r, j], `a simple return must be > −1 (a loss of more than 100 %), got ${x}`));
      }),
    );
    if (t <= n && (estimation?.covariance ?? 'sample') === 'sample' && (estimation?.factorModel ?? 'none') === 'none') {
      warnings.push({
        code: 'singular-sample-covariance',
        message: `The history has ${t} rows for ${n} assets, so the sample covariance is singular; consider estimation.covariance "ledoit-wolf" or a factor model.`,
      });
    }
    if (inputs.factors) {
      const k = inputs.factors.names.length;
      checkUnique(inputs.factors.names, ['inputs', 'factors', 'names'], 'factor names', out);
      checkShape(inputs.factors.returns, t, k, ['inputs', 'factors', 'returns'], 'factor returns (same rows as returns, one column per factor)', out);
    }
    if (estimation?.factorModel === 'regression' && !inputs.factors) {
      out.push(problem(['estimation', 'factorModel'], 'factorModel "regression" needs inputs.factors (the factor return history)'));
    }
    if (estimation?.factorModel === 'pca') {
      const k = estimation.pcaFactors;
      if (k === undefined) out.push(problem(['estimation', 'pcaFactors'], 'factorModel "pca" needs pcaFactors, the number of components'));
      else if (k >= Math.min(n, t - 1)) out.push(problem(['estimation', 'pcaFactors'], `expected fewer than min(assets, rows − 1) = ${Math.min(n, t - 1)} components, got ${k}`));
    }
    if (estimation?.covariance === 'ewma' && estimation.ewmaDecay === undefined) {
      warnings.push({ code: 'ewma-default-decay', message: 'estimation.ewmaDecay not given; using 0.94 (the usual daily choice, common practice).' });
    }
    return undefined;
  }
  if (estimation && (estimation.covariance !== 'sample' || estimation.factorModel !== 'none' || estimation.ewmaDecay !== undefined || estimation.pcaFactors !== undefined)) {
    out.push(problem(['estimation'], 'covariance estimators and estimated factor models apply only to inputs.returns (a return history); these inputs are already moments'));
  }
  checkLength(inputs.mean, n, ['inputs', 'mean'], 'means', out);
  if ('covariance' in inputs) {
    if (!checkShape(inputs.covariance, n, n, ['inputs', 'covariance'], 'covariance (N×N)', out)) return undefined;
    if (!checkSymmetric(inputs.covariance, ['inputs', 'covariance'], out)) return undefined;
    const covariance = inputs.covariance;
    costly.push(() => {
      const psd = checkPsd(covariance);
      if (!psd.positiveDefinite) singular.found = true;
      if (psd.psd) {
        if (!psd.positiveDefinite) {
          warnings.push({
            code: SINGULAR_COVARIANCE_WARNING,
            message:
              'The covariance is singular (positive semi-definite, not definite): some combinations of the assets have no risk in it. ' +
              'Minimum variance and mean-variance then solve on a ridge and each solve costs more; risk parity may have no solution.',
          });
        }
        return;
      }
      const smallest = psd.smallestEigenvalue === undefined ? `below −${psd.threshold.toExponential(3)}` : `${psd.smallestEigenvalue.toExponential(6)}`;
      if (estimation?.repairCovariance) {
        warnings.push({
          code: 'covariance-repaired',
          message: `The covariance was not positive semi-definite (smallest eigenvalue ${smallest}); it was replaced by the nearest PSD matrix (eigenvalues clipped at 0) as requested.`,
        });
        return;
      }
      out.push(
        problem(
          ['inputs', 'covariance'],
          `covariance must be positive semi-definite: smallest eigenvalue is ${smallest}; fix it, or set estimation.repairCovariance: true to use the nearest PSD matrix`,
        ),
      );
    });
    return undefined;
  }
  const fm = inputs.factorModel;
  const k = fm.factors.length;
  checkUnique(fm.factors, ['inputs', 'factorModel', 'factors'], 'factor ids', out);
  checkShape(fm.loadings, n, k, ['inputs', 'factorModel', 'loadings'], 'loadings (N×K)', out);
  checkLength(fm.specificVariance, n, ['inputs', 'factorModel', 'specificVariance'], 'specific variances', out);
  fm.specificVariance.forEach((d, i) => {
    if (!(d > 0)) out.push(problem(['inputs', 'factorModel', 'specificVariance', i], `a specific variance must be > 0, got ${d}`));
  });
  if (checkShape(fm.factorCovariance, k, k, ['inputs', 'factorModel', 'factorCovariance'], 'factor covariance (K×K)', out) && checkSymmetric(fm.factorCovariance, ['inputs', 'factorModel', 'factorCovariance'], out)) {
    const psd = checkPsd(fm.factorCovariance);
    if (!psd.psd) out.push(problem(['inputs', 'factorModel', 'factorCovariance'], `factor covariance must be positive semi-definite: smallest eigenvalue is ${psd.smallestEigenvalue?.toExponential(6) ?? `below −${psd.threshold.toExponential(3)}`}`));
  }
  return undefined;
}

function checkUnique(ids: readonly string[], path: (string | number)[], what: string, out: Problem[]): void {
  const seen = new Set<string>();
  ids.forEach((id, i) => {
    if (seen.has(id)) out.push(problem([...path, i], `${what} must be unique: "${id}" appears twice`));
    seen.add(id);
  });
}

function checkViews(p: Proposal, out: Problem[]): void {
  if (!p.views) return;
  const n = p.assets.length;
  checkLength(p.views.mean, n, ['views', 'mean'], 'view means', out);
  checkLength(p.views.stdErr, n, ['views', 'stdErr'], 'standard errors', out);
  p.views.stdErr.forEach((s, i) => {
    if (!(s > 0)) out.push(problem(['views', 'stdErr', i], `a standard error must be > 0, got ${s}`));
  });
}

function hasFactorModel(p: Proposal): boolean {
  return 'factorModel' in p.inputs || (p.estimation?.factorModel ?? 'none') !== 'none';
}

function checkMethod(spec: MethodSpec, p: Proposal, path: (string | number)[], out: Problem[]): void {
  if (spec.name === 'mean-variance' && typeof spec.riskAversion === 'object' && !hasFactorModel(p)) {
    out.push(problem([...path, 'riskAversion'], 'separate factor and specific risk aversion needs a factor model (inputs.factorModel, or estimation.factorModel "regression" or "pca"); give one number instead'));
  }
  if (spec.name === 'risk-parity') {
    const c = p.constraints;
    if (c && (c.longOnly === false || Math.abs(c.budget - 1) > TOLERANCES.budget)) {
      out.push(problem([...path, 'name'], 'risk parity is long-only and fully invested (budget 1); these constraints differ'));
    }
    if (spec.budgets) {
      checkLength(spec.budgets, p.assets.length, [...path, 'budgets'], 'risk budgets', out);
      spec.budgets.forEach((b, i) => {
        if (!(b > 0)) out.push(problem([...path, 'budgets', i], `a risk budget must be > 0, got ${b}`));
      });
    }
  }
}

function checkConstraints(p: Proposal, out: Problem[], warnings: Warning[]): void {
  const c = p.constraints;
  if (!c) return;
  const n = p.assets.length;
  for (const side of ['lower', 'upper'] as const) {
    const b = c[side];
    if (Array.isArray(b)) checkLength(b, n, ['constraints', side], `${side} bounds`, out);
  }
  if (out.length > 0) return;
  const lower = expandBound(c.lower, n, c.longOnly ? 0 : -Infinity);
  const upper = expandBound(c.upper, n, Infinity);
  let sumLower = 0;
  let sumUpper = 0;
  for (let i = 0; i < n; i++) {
    if (c.longOnly && lower[i] < 0) out.push(problem(['constraints', 'lower', ...(Array.isArray(c.lower) ? [i] : [])], `long-only portfolios cannot have a negative lower bound (got ${lower[i]}); set longOnly: false to allow short positions`));
    if (lower[i] > upper[i]) out.push(problem(['constraints', 'upper', ...(Array.isArray(c.upper) ? [i] : [])], `upper bound ${upper[i]} is below lower bound ${lower[i]} for ${p.assets[i]}`));
    sumLower += lower[i];
    sumUpper += upper[i];
  }
  if (sumLower > c.budget + TOLERANCES.budget) out.push(problem(['constraints', 'lower'], `infeasible: lower bounds sum to ${round(sumLower)}, above the budget ${c.budget}`, 'unsolvable'));
  if (sumUpper < c.budget - TOLERANCES.budget) out.push(problem(['constraints', 'upper'], `infeasible: upper bounds sum to ${round(sumUpper)}, below the budget ${c.budget}`, 'unsolvable'));
  const index = new Map(p.assets.map((a, i) => [a, i] as const));
  const names = new Set<string>();
  const memberships = (c.groups ?? []).reduce((total, g) => total + g.assets.length, 0);
  if (memberships > LIMITS.maxGroupMemberships) {
    out.push(problem(['constraints', 'groups'], `the groups list ${memberships} members in total, over the limit of ${LIMITS.maxGroupMemberships} (maxGroupMemberships)`, 'limit'));
    return;
  }
  (c.groups ?? []).forEach((g, gi) => {
    const path = ['constraints', 'groups', gi];
    if (names.has(g.name)) out.push(problem([...path, 'name'], `group names must be unique: "${g.name}" appears twice`));
    names.add(g.name);
    let gLower = 0;
    let gUpper = 0;
    const listed = new Map<string, number>();
    g.assets.forEach((a, ai) => {
      const i = index.get(a);
      const first = listed.get(a);
      if (i === undefined) out.push(problem([...path, 'assets', ai], `unknown asset "${a}" (not in assets)`));
      else if (first !== undefined) out.push(problem([...path, 'assets', ai], `a group lists each asset once: "${a}" is already at assets[${first}] of this group`));
      else {
        listed.set(a, ai);
        gLower += lower[i];
        gUpper += upper[i];
      }
    });
    if (g.min === undefined && g.max === undefined) warnings.push({ code: 'group-without-limits', message: `Group "${g.name}" has neither min nor max; it constrains nothing.` });
    if (g.min !== undefined && g.max !== undefined && g.min > g.max) out.push(problem([...path, 'max'], `group max ${g.max} is below its min ${g.min}`));
    if (g.min !== undefined && g.min > gUpper + TOLERANCES.budget) out.push(problem([...path, 'min'], `infeasible: group min ${g.min} exceeds the sum of its members' upper bounds ${round(gUpper)}`, 'unsolvable'));
    if (g.max !== undefined && g.max < gLower - TOLERANCES.budget) out.push(problem([...path, 'max'], `infeasible: group max ${g.max} is below the sum of its members' lower bounds ${round(gLower)}`, 'unsolvable'));
  });
}

function checkWeights(p: Proposal, out: Problem[], warnings: Warning[]): void {
  const n = p.assets.length;
  if (p.weights.length !== n) return;
  const budget = p.constraints?.budget ?? 1;
  const longOnly = p.constraints?.longOnly ?? true;
  const sum = p.weights.reduce((a, b) => a + b, 0);
  if (Math.abs(sum - budget) > TOLERANCES.budget) out.push(problem(['weights'], `weights must sum to the budget ${budget} (±${TOLERANCES.budget}), got ${sum}`));
  if (longOnly) {
    p.weights.forEach((w, i) => {
      if (w < -TOLERANCES.negativeWeight) out.push(problem(['weights', i], `long-only proposal has a negative weight ${w} for ${p.assets[i]}; set constraints.longOnly: false if shorts are intended`));
    });
  }
  const c = p.constraints;
  if (c && out.length === 0) {
    const lower = expandBound(c.lower, n, longOnly ? 0 : -Infinity);
    const upper = expandBound(c.upper, n, Infinity);
    const outside = p.assets.filter((_, i) => p.weights[i] < lower[i] - TOLERANCES.budget || p.weights[i] > upper[i] + TOLERANCES.budget);
    if (outside.length > 0) warnings.push({ code: 'proposal-outside-bounds', message: `The proposal itself breaks the per-asset bounds for: ${outside.join(', ')}.` });
  }
}

function checkResampling(p: Proposal, out: Problem[]): void {
  const r = p.resampling;
  if (!r?.scheme) return;
  const inputs = p.inputs;
  const history = 'returns' in inputs;
  if (!history && r.scheme !== 'parametric') out.push(problem(['resampling', 'scheme'], `"${r.scheme}" resamples a return history; these inputs are moments, so use "parametric"`));
  if (r.meanBlockLength !== undefined && r.scheme !== 'stationary-bootstrap') out.push(problem(['resampling', 'meanBlockLength'], 'meanBlockLength applies only to the stationary bootstrap'));
  if ('returns' in inputs && typeof r.meanBlockLength === 'number' && r.meanBlockLength > inputs.returns.length) {
    out.push(problem(['resampling', 'meanBlockLength'], `expected at most the number of rows (${inputs.returns.length}), got ${r.meanBlockLength}`));
  }
}

function round(x: number): number {
  return Math.round(x * 1e9) / 1e9;
}

