/**
 * The engineering caution shown beside every figure, alert and report that Isentrope produces.
 * One constant so that the wording is the same everywhere (API, dashboard, exports, webhooks).
 */
export const CAUTION =
  'Figures support, never replace, the judgement of qualified engineers; maintenance decisions rest with them; local codes and licensed practice prevail.';
