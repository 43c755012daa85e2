/** Plain cautions carried by every report, every response and the page. */
export const CAUTIONS: readonly string[] = [
  'These figures are statistical estimates from resampled inputs, not investment advice and not a recommendation to buy or sell anything.',
  'Past returns do not predict future returns; a history or a forecast can be wrong in ways no resampling shows.',
  "Monte Carlo figures carry sampling error (shown as ± se, the Monte Carlo standard error); small differences between methods or runs may be noise.",
  "Defer to your firm's own investment policies, risk limits and licensed professionals before acting on any allocation.",
];
