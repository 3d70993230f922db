// Prints how a simulated population of technicians fares with the trim assistant (not a test):
//   node tests/bench/trim-population.ts [units] [seed]

import { simulatePopulation } from '../support/trim-population.ts';

const [units, seed] = process.argv.slice(2).map(Number);
const percent = (share: number) => `${(100 * share).toFixed(1)} %`;
for (const depthDbc of [
  [-86, -62],
  [-95, -86],
] as [number, number][]) {
  const figures = simulatePopulation({ depthDbc, ...(units ? { units } : {}), ...(seed ? { seed } : {}) });
  console.log(
  [
    `true null depths         ${depthDbc[0]} to ${depthDbc[1]} dBc (noise floor −100 dBc)`,
    `units                    ${figures.units}`,
    `recommendations shown    ${figures.recommendationsShown}`,
    `past the true null       ${figures.pastNull}`,
    `worst margin             ${figures.worstMargin.toFixed(3)} turns short of the true null`,
    `stable within 8 points   ${percent(figures.shareWithin8Points)}`,
    `median points            ${figures.medianPoints}`,
    `within 2 dB of the depth ${percent(figures.shareWithin2Db)}`,
  ].join('\n') + '\n',
  );
}
