export { canonicalJson } from './canonical.js';
export type { ChangeImpact, RuleDiffWarning, RuleSetChange, RuleSetDiff, RuleSetSection } from './diff.js';
export { compareVersions, diffRuleSets, formatRuleSetDiff } from './diff.js';
export type { LoadRuleSetOptions, RuleIssue, RuleIssueCode, RuleLoadResult } from './load.js';
export { formatPath, formatRuleIssue, loadRuleSet } from './load.js';
export type {
  AcylRule,
  AglyconeRule,
  CrossRingRule,
  ResidueRule,
  RuleSet,
  RuleSetInput,
  SmallLossRule,
} from './schema.js';
export {
  AcylRuleSchema,
  AdductLossRuleSchema,
  AglyconeRuleSchema,
  ChangelogEntrySchema,
  CleanupSchema,
  CrossRingRuleSchema,
  LimitsSchema,
  ResidueRuleSchema,
  RuleSetSchema,
  ScoringSchema,
  SmallLossRuleSchema,
  TolerancesSchema,
} from './schema.js';
