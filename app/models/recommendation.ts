/** The planner's recommendation in a decision brief: long enough for a board paper's section, short enough to print on a page or two. */
export const RECOMMENDATION_MAX_LENGTH = 6_000;
