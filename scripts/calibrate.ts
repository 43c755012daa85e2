/**
 * Calibration of wobble's Monte Carlo errors (a script, not a test): `npm run calibrate`.
 *
 * For a case, runs the stress with K seeds at each draw count and prints, for every kind of
 * reported error, ratio = (sd of the figure across the K seeds) ÷ (mean stdErr the reports give
 * for it). 1.0 is honest; the goal is 0.8–1.2. A ratio estimated from K seeds has its own noise:
 * the sd of K values has a relative sd of about 1/√(2(K−1)) (normal theory), printed beside it.
 * Figures whose error is exactly 0 in every seed and whose value never moves are counted as
 * "exact" (point masses); a figure with stdErr 0 that does move is flagged.
 *
 * It also prints the gate's false-fail rate: a `max` rule placed exactly at the true value (from
 * long runs, L seeds × 5000 draws, pooled with the K runs at that draw count, weighted by draws) fails when value − z·stdErr > threshold, z = Φ⁻¹(0.95)
 * (one-sided, 95 % confidence); an honest error fails about 5 % of the time (goal ≤ 6 %). The same
 * for `maxIncrease` rules against a baseline proposal on common random numbers (paired errors).
 *
 * Usage: npm run calibrate -- [--case d1|demo] [--seeds K] [--draws 200,500,2000] [--long-seeds L]
 * The cases: test/fixtures/cases/D1-mc-error-history.json (4 assets, 120 months, seven methods;
 * baseline: the same with risk aversion 3.5 instead of 3) and the demo proposal (10 assets, 180
 * months; baseline: risk aversion 5 instead of 4).
 */
import { readFileSync } from 'node:fs';
import { parseArgs } from 'node:util';
import type { Proposal, ProposalInput } from '../src/schema/proposal.js';
import type { Report } from '../src/schema/report.js';
import { validateProposal, type Warning } from '../src/schema/validate.js';
import { methodKey } from '../src/stress/report.js';
import { pairedStdErr, type StressRun } from '../src/stress/paired.js';
import { stressRun } from '../src/stress/run.js';

const Z95_ONE_SIDED = 1.6448536269514722;
const GATE_METRICS = ['turnover-from-proposal.p50', 'turnover-from-proposal.mean', 'outside-band-share', 'volatility-band-width', 'mean-driven-share', 'max-weight-sd'] as const;
type GateMetric = (typeof GATE_METRICS)[number];

interface Sample {
  value: number;
  stdErr: number | null;
}
/** kind → figure id → one sample per seed. */
type Samples = Map<string, Map<string, Sample[]>>;

function add(samples: Samples, kind: string, id: string, value: number, stdErr: number | null): void {
  let byId = samples.get(kind);
  if (!byId) samples.set(kind, (byId = new Map()));
  let list = byId.get(id);
  if (!list) byId.set(id, (list = []));
  list.push({ value, stdErr });
}

function gateValue(report: Omit<Report, 'verdict'>, metric: GateMetric): Sample {
  const m = report.methods[0];
  switch (metric) {
    case 'turnover-from-proposal.p50':
      return { value: m.turnoverFromProposal.p50, stdErr: m.turnoverFromProposal.p50StdErr ?? null };
    case 'turnover-from-proposal.mean':
      return { value: m.turnoverFromProposal.mean, stdErr: m.turnoverFromProposal.stdErr };
    case 'outside-band-share':
      return m.outsideBandShare;
    case 'volatility-band-width':
      return report.proposal.volatilityBandWidth;
    case 'mean-driven-share':
      return { value: m.meanDrivenShare.overall, stdErr: m.meanDrivenShare.stdErr };
    case 'max-weight-sd':
      return m.maxWeightSd;
  }
}

/** Every error-carrying figure of one run, by kind. */
function collect(samples: Samples, run: { report: Omit<Report, 'verdict'>; run: StressRun }): void {
  const { report } = run;
  const { plan, acc } = run.run;
  plan.problem.methods.forEach((spec, k) => {
    const label = methodKey(spec);
    const summary = acc.methods[k].weights.summarize(plan.problem.proposalWeights);
    summary.perAsset.forEach((w, i) => {
      const id = `${label}/${plan.problem.assets[i]}`;
      add(samples, 'weight mean', id, w.mean, w.meanStdErr);
      add(samples, 'weight p05', id, w.p05, w.p05StdErr);
      add(samples, 'weight p50', id, w.p50, w.p50StdErr);
      add(samples, 'weight p95', id, w.p95, w.p95StdErr);
      add(samples, 'weight selection rate', id, w.selectionRate, w.selectionRateStdErr);
    });
    const m = report.methods[k];
    add(samples, 'turnover p50', label, m.turnoverFromProposal.p50, m.turnoverFromProposal.p50StdErr ?? null);
    add(samples, 'turnover mean', label, m.turnoverFromProposal.mean, m.turnoverFromProposal.stdErr);
    add(samples, 'turnover-from-base p50', label, m.turnoverFromBase.p50, m.turnoverFromBase.p50StdErr ?? null);
    add(samples, 'method volatility p50', label, m.volatility.p50, m.volatility.p50StdErr ?? null);
    add(samples, 'CE loss mean', label, m.certaintyEquivalentLoss.mean, m.certaintyEquivalentLoss.stdErr);
    add(samples, 'CE loss p50', label, m.certaintyEquivalentLoss.p50, m.certaintyEquivalentLoss.p50StdErr ?? null);
    add(samples, 'outside-band share', label, m.outsideBandShare.value, m.outsideBandShare.stdErr);
    add(samples, 'max weight sd', label, m.maxWeightSd.value, m.maxWeightSd.stdErr);
    add(samples, 'mean-driven share', label, m.meanDrivenShare.overall, m.meanDrivenShare.stdErr);
  });
  add(samples, 'proposal volatility mean', 'proposal', report.proposal.volatility.mean, report.proposal.volatility.stdErr);
  add(samples, 'proposal volatility p50', 'proposal', report.proposal.volatility.p50, report.proposal.volatility.p50StdErr ?? null);
  add(samples, 'volatility band width', 'proposal', report.proposal.volatilityBandWidth.value, report.proposal.volatilityBandWidth.stdErr);
}

function sd(xs: number[]): number {
  const mean = xs.reduce((a, b) => a + b, 0) / xs.length;
  return Math.sqrt(xs.reduce((a, b) => a + (b - mean) ** 2, 0) / (xs.length - 1));
}

function mean(xs: number[]): number {
  return xs.reduce((a, b) => a + b, 0) / xs.length;
}

function quantile(sorted: number[], q: number): number {
  const h = (sorted.length - 1) * q;
  const j = Math.floor(h);
  return sorted[j] + (h - j) * ((sorted[Math.min(j + 1, sorted.length - 1)] ?? sorted[j]) - sorted[j]);
}

interface KindRow {
  kind: string;
  /** Figure id and ratio of the worst figure (farthest from 1 on a log scale). */
  worst?: [string, number];
  figures: number;
  exact: number;
  flagged: number;
  ratios: number[];
}

function ratioRows(samples: Samples): KindRow[] {
  const rows: KindRow[] = [];
  for (const [kind, byId] of samples) {
    const row: KindRow = { kind, figures: 0, exact: 0, flagged: 0, ratios: [] };
    for (const [id, list] of byId) {
      row.figures++;
      const errors = list.map((s) => s.stdErr);
      if (errors.some((e) => e === null)) {
        row.flagged++;
        continue;
      }
      const spread = sd(list.map((s) => s.value));
      const meanError = mean(errors as number[]);
      if (meanError === 0) {
        if (spread === 0) row.exact++;
        else row.flagged++;
        continue;
      }
      if (spread === 0) {
        // Never moves, yet an error is reported: counted as a ratio of 0.
        row.ratios.push(0);
        continue;
      }
      const ratio = spread / meanError;
      row.ratios.push(ratio);
      if (!row.worst || Math.abs(Math.log(ratio)) > Math.abs(Math.log(row.worst[1]))) row.worst = [id, ratio];
    }
    rows.push(row);
  }
  return rows;
}

function loadCase(name: string): { candidate: ProposalInput; baseline: ProposalInput } {
  const file = name === 'demo' ? '../schemas/examples/demo-proposal.json' : '../test/fixtures/cases/D1-mc-error-history.json';
  const candidate = JSON.parse(readFileSync(new URL(file, import.meta.url), 'utf8')) as ProposalInput;
  const method = candidate.method;
  if (method.name !== 'mean-variance' || typeof method.riskAversion !== 'number') throw new Error('calibration cases use mean-variance with a scalar risk aversion');
  const baseline = { ...candidate, method: { ...method, riskAversion: method.riskAversion + (name === 'demo' ? 1 : 0.5) } };
  return { candidate, baseline };
}

function valid(input: ProposalInput): { proposal: Proposal; warnings: Warning[] } {
  const v = validateProposal(input);
  if (!v.ok) throw new Error(`invalid proposal: ${JSON.stringify(v.problems)}`);
  return v;
}

async function main(): Promise<void> {
  const { values } = parseArgs({
    args: process.argv.slice(2),
    options: {
      case: { type: 'string', default: 'd1' },
      seeds: { type: 'string' },
      draws: { type: 'string', default: '200,500,2000' },
      'long-seeds': { type: 'string', default: '4' },
    },
  });
  const caseName = values.case ?? 'd1';
  const drawCounts = (values.draws ?? '200,500,2000').split(',').map(Number);
  const longSeeds = Number(values['long-seeds']);
  const { candidate, baseline } = loadCase(caseName);
  const cand = valid(candidate);
  const base = valid(baseline);
  const seedsFor = (draws: number): number => (values.seeds ? Number(values.seeds) : draws >= 2000 ? 60 : 150);

  // Truth for the gate: long runs (L seeds × 5000 draws), averaged.
  const truth = new Map<GateMetric, number>();
  const truthDiff = new Map<GateMetric, number>();
  for (let s = 0; s < longSeeds; s++) {
    const seed = `long-${s}`;
    const a = await stressRun(cand.proposal, cand.warnings, { draws: 5000, seed });
    const b = await stressRun(base.proposal, base.warnings, { draws: 5000, seed });
    for (const metric of GATE_METRICS) {
      const va = gateValue(a.report, metric).value;
      const vb = gateValue(b.report, metric).value;
      truth.set(metric, (truth.get(metric) ?? 0) + va / longSeeds);
      truthDiff.set(metric, (truthDiff.get(metric) ?? 0) + (va - vb) / longSeeds);
    }
  }

  console.log(`wobble Monte Carlo error calibration — case ${caseName}; truth from ${longSeeds} × 5000 draws`);
  console.log('ratio = sd of the figure across seeds ÷ mean reported stdErr (1.0 honest; goal 0.8–1.2)');
  for (const draws of drawCounts) {
    const K = seedsFor(draws);
    const samples: Samples = new Map();
    const paired: Samples = new Map();
    const gate: Samples = new Map();
    const fails = new Map<string, number>();
    const bias = new Map<string, number[]>();
    const started = performance.now();
    for (let s = 0; s < K; s++) {
      const seed = `cal-${s}`;
      const a = await stressRun(cand.proposal, cand.warnings, { draws, seed });
      const b = await stressRun(base.proposal, base.warnings, { draws, seed });
      collect(samples, a);
      for (const metric of GATE_METRICS) {
        const est = gateValue(a.report, metric);
        add(gate, metric, 'proposal method', est.value, est.stdErr);
        const diff = est.value - gateValue(b.report, metric).value;
        const se = pairedStdErr(a.run, b.run, metric, a.run.plan.problem.methods[0]);
        add(paired, `paired ${metric}`, 'proposal method', diff, se === undefined || !Number.isFinite(se) ? null : se);
      }
    }
    // The truth: the draw-weighted mean of the long runs and of these K runs (the long runs alone
    // would carry an error of about √(draws / (L·5000)) stdErr into every comparison).
    const weightLong = longSeeds * 5000;
    const weightHere = K * draws;
    for (const metric of GATE_METRICS) {
      const values = gate.get(metric)?.get('proposal method') ?? [];
      const diffs = paired.get(`paired ${metric}`)?.get('proposal method') ?? [];
      const t = ((truth.get(metric) as number) * weightLong + mean(values.map((v) => v.value)) * weightHere) / (weightLong + weightHere);
      const td = ((truthDiff.get(metric) as number) * weightLong + mean(diffs.map((v) => v.value)) * weightHere) / (weightLong + weightHere);
      for (const est of values) {
        if (est.stdErr !== null && est.value - Z95_ONE_SIDED * est.stdErr > t) fails.set(metric, (fails.get(metric) ?? 0) + 1);
        if (est.stdErr !== null && est.stdErr > 0) bias.set(metric, [...(bias.get(metric) ?? []), (est.value - t) / est.stdErr]);
      }
      for (const d of diffs) if (d.stdErr !== null && d.value - Z95_ONE_SIDED * d.stdErr > td) fails.set(`paired ${metric}`, (fails.get(`paired ${metric}`) ?? 0) + 1);
    }
    const seconds = (performance.now() - started) / 1000;
    const noise = 1 / Math.sqrt(2 * (K - 1));
    console.log(`\n== ${draws} draws, K = ${K} seeds (${seconds.toFixed(0)} s); a single ratio's own noise ≈ ±${(100 * noise).toFixed(0)} % (1/√(2(K−1)))`);
    console.log('kind                               figures  exact  flagged   ratio median   [p10 – p90]      min – max     within 0.8–1.2');
    for (const row of [...ratioRows(samples), ...ratioRows(paired)]) {
      const sorted = [...row.ratios].sort((x, y) => x - y);
      const within = sorted.filter((r) => r >= 0.8 && r <= 1.2).length;
      const stats =
        sorted.length === 0
          ? '—'.padEnd(60)
          : `${quantile(sorted, 0.5).toFixed(2).padStart(12)}   [${quantile(sorted, 0.1).toFixed(2)} – ${quantile(sorted, 0.9).toFixed(2)}]`.padEnd(34) +
            `${sorted[0].toFixed(2)} – ${sorted[sorted.length - 1].toFixed(2)}`.padEnd(16) +
            `${within}/${sorted.length}`.padStart(8);
      console.log(`${row.kind.padEnd(34)} ${String(row.figures).padStart(7)} ${String(row.exact).padStart(6)} ${String(row.flagged).padStart(8)} ${stats}${row.worst && row.ratios.length > 1 ? `   worst: ${row.worst[0]}` : ''}`);
    }
    console.log(`false-fail rate of a max rule at the true value, 95 % one-sided (goal ≤ 6 %; sd of a rate near 5 % from K seeds ≈ ${(100 * Math.sqrt(0.05 * 0.95 / K)).toFixed(1)} %):`);
    for (const metric of GATE_METRICS) {
      const single = (100 * (fails.get(metric) ?? 0)) / K;
      const pairedRate = (100 * (fails.get(`paired ${metric}`) ?? 0)) / K;
      const z = bias.get(metric) ?? [];
      const meanZ = z.length > 0 ? mean(z) : Number.NaN;
      console.log(`  ${metric.padEnd(30)} ${single.toFixed(1).padStart(5)} %   (mean (value − truth)/stdErr ${meanZ.toFixed(2)})   maxIncrease vs baseline (paired): ${pairedRate.toFixed(1).padStart(5)} %`);
    }
  }
}

await main();
