import { readFileSync } from 'node:fs';
import { validateProposal } from './src/schema/validate.js';
import { prepareProblem } from './src/stress/problem.js';
import { solveBaseOptima } from './src/stress/engine.js';
import { forecastSensitivityTables } from './src/stress/forecast-sensitivity.js';
const v = validateProposal(JSON.parse(readFileSync('schemas/examples/demo-proposal.json','utf8')));
if (!v.ok) throw new Error('bad');
const problem = prepareProblem(v.proposal, v.warnings);
let t0 = performance.now();
const solved = solveBaseOptima(problem, true);
console.log('base optima ms', performance.now()-t0);
for (let k=0;k<3;k++){ t0 = performance.now();
const t = forecastSensitivityTables(problem, solved.base, solved.baseScenarios, 0);
console.log('tables ms', performance.now()-t0, t.workUnits.toExponential(2)); }
