/**
 * The cautions carried by every result the engine produces and every page or file that shows one
 * (common practice for decision-support tools in health care: a model informs, people decide).
 */
export const PLANNING_CAUTIONS = [
  "Results are planning estimates for populations from a queueing model, not decisions about individual patients.",
  "Clinical prioritisation stays with clinicians; local access policy, contracts and patients' legal right to choose prevail.",
  "Read every figure beside its assumptions and data date, and weigh efficiency together with equity.",
] as const;
