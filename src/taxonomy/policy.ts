/**
 * @module taxonomy/policy
 * Decides, per label, how strictly the matcher treats it: case, required evidence (a technical
 * neighbour within a window of tokens, or another skill nearby as in a list), words that veto a
 * match right before or after it, and whether inflected forms count (Porter stems).
 *
 * Three levels, each overriding the one before: built-in defaults; rules inferred from the label
 * itself (when the rule file leaves `infer = on`); the rule file's concept section, then its
 * label section. Inferred rules, for taxonomies that carry none of their own:
 * - one-token labels of one or two letters ("R", "C", "Go"): case as written when the label has
 *   capitals, and evidence always;
 * - one-token labels with capitals that are also ordinary English words ("Excel", "Spark",
 *   "Swift"): case as written (or all capitals), and evidence at the start of a sentence, where
 *   capitals prove nothing.
 */
import type { CaseMode, EvidenceWhen, RuleFields, RuleSet } from './rules.ts'
import type { SkillType } from './types.ts'

export interface LabelPolicy {
  caseMode: CaseMode
  near: boolean
  skills: boolean
  when: EvidenceWhen
  nearWords: readonly string[]
  window: number
  notNext: readonly string[]
  notPrev: readonly string[]
  stem: boolean
  stemExclude: readonly string[]
  /** which level decided the evidence and case settings, for `map --explain` */
  origin: 'default' | 'inferred' | 'rule'
}

/** Technical neighbours that count as evidence when no rule file defines `[@tech]`. */
export const DEFAULT_TECH_WORDS: readonly string[] = [
  'programming', 'programmer', 'language', 'languages', 'developer', 'developers', 'development', 'engineer',
  'engineers', 'engineering', 'code', 'coding', 'software', 'framework', 'frameworks', 'library', 'libraries',
  'stack', 'backend', 'frontend', 'api', 'apis', 'scripting', 'scripts', 'database', 'databases', 'analytics',
  'statistical', 'cloud', 'platform', 'tools', 'tooling', 'technologies', 'technical', 'experience',
  'proficiency', 'proficient', 'knowledge', 'expertise', 'familiarity', 'certified', 'certification',
  'microservices', 'applications', 'systems', 'devops', 'pipelines', 'spreadsheets', 'modelling', 'modeling',
]

/**
 * Words whose Porter stem equals that of a common soft-skill label but whose meaning differs
 * ("community" → commun, like "communication"; "negotiable" → negoti, like "negotiation").
 * Found by stemming the shipped labels' families; common practice, no source.
 */
export const DEFAULT_STEM_EXCLUDE: readonly string[] = [
  'community', 'communities', 'communal', 'commune', 'communes', 'communism', 'negotiable',
  'integrate', 'integrated', 'integrates', 'integrating', 'integration', 'integrations', 'integral', 'integrator',
  'integrators', 'adapter', 'adapters', 'creative', 'creatives', 'delegates', 'influencer', 'influencers',
  'assert', 'asserts', 'assertion', 'assertions', 'account', 'accounts', 'accounting', 'accountant',
  'accountants', 'professional', 'professionals', 'resource', 'resources',
  'depend', 'depends', 'dependent', 'dependency', 'dependencies', 'decision', 'decisions', 'coaches',
]

/** One-token labels with capitals whose lexicon check the inference needs (letters only, three or more). */
export function needsLexiconCheck(written: string[], folded: string[]): boolean {
  return folded.length === 1 && /^\p{L}{3,}$/u.test(folded[0]!) && written[0] !== folded[0]
}

export interface LabelFacts {
  /** tokens as written */
  written: string[]
  /** tokens folded */
  folded: string[]
  type: SkillType
  isPref: boolean
}

/** The built-in and inferred policy of a label, before the rule file's sections apply. */
export function inferredPolicy(facts: LabelFacts, rules: RuleSet, commonWords: ReadonlySet<string>): LabelPolicy {
  const hasUpper = facts.written.some((w) => w !== w.toLowerCase())
  const alphabetic = facts.folded.every((t) => /^[a-z]+$/.test(t))
  const single = facts.folded.length === 1
  // Porter stems for soft skills only: for hard labels they conflate verbs and nouns ("build
  // services" would meet "building services"); multi-word hard labels get number variants instead
  const stem = alphabetic && facts.type === 'soft' && (!single || facts.isPref)
  const policy: LabelPolicy = {
    caseMode: 'any',
    near: false,
    skills: false,
    when: 'never',
    nearWords: rules.lists.get('tech') ?? DEFAULT_TECH_WORDS,
    window: rules.window,
    notNext: [],
    notPrev: [],
    stem,
    stemExclude: rules.stemExclude.length > 0 ? [...DEFAULT_STEM_EXCLUDE, ...rules.stemExclude] : DEFAULT_STEM_EXCLUDE,
    origin: 'default',
  }
  if (!rules.infer || !single) return policy
  const token = facts.folded[0]!
  if (/^\p{L}{1,2}$/u.test(token)) {
    policy.caseMode = hasUpper ? 'exact' : 'any'
    policy.near = true
    policy.skills = true
    policy.when = 'always'
    policy.origin = 'inferred'
  } else if (hasUpper && /^\p{L}+$/u.test(token) && commonWords.has(token)) {
    policy.caseMode = 'exact-or-upper'
    policy.near = true
    policy.skills = true
    policy.when = 'at-start'
    policy.origin = 'inferred'
  }
  return policy
}

/** Applies a rule section's fields on top of a policy (fields left unset keep the policy's value). */
export function applyRule(policy: LabelPolicy, rule: RuleFields, rules: RuleSet): LabelPolicy {
  const p = { ...policy }
  if (rule.caseMode !== undefined) p.caseMode = rule.caseMode
  if (rule.evidence !== undefined) {
    p.near = rule.evidence.includes('near')
    p.skills = rule.evidence.includes('skills')
  }
  if (rule.when !== undefined) p.when = rule.when
  if (rule.near !== undefined) p.nearWords = rule.near
  if (rule.window !== undefined) p.window = rule.window
  if (rule.notNext !== undefined) p.notNext = rule.notNext
  if (rule.notPrev !== undefined) p.notPrev = rule.notPrev
  if (rule.stem !== undefined) p.stem = rule.stem
  if (rule.stemExclude !== undefined) p.stemExclude = [...policy.stemExclude, ...rule.stemExclude]
  if (rule.caseMode !== undefined || rule.evidence !== undefined || rule.when !== undefined) p.origin = 'rule'
  if (p.when !== 'never' && !p.near && !p.skills) p.when = 'never'
  return p
}
