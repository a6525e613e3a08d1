/**
 * @module demo/planted
 * The skills whose demand the demo scenario plants with known shapes, so that tests can check that
 * the pipeline finds them again. Ids are the shipped taxonomy's concept ids (kebab-case slugs of
 * the prefLabel); every id here must exist in taxonomy/skills.csv with the label used below.
 * All shapes are invented for the fictional demo organisation; no real data.
 */

/** How a planted skill's share of postings moves over the demo months. */
export type PlantedShape =
  | { kind: 'emerging'; startMonth: number; annualGrowth: number }
  | { kind: 'rising'; annualGrowth: number }
  | { kind: 'steady' }
  | { kind: 'declining'; halfLifeYears: number }
  | { kind: 'fading'; halfLifeYears: number }
  | { kind: 'change'; breakMonth: number; halfLifeYears: number }

export interface PlantedSkill {
  /** concept id in the shipped taxonomy */
  id: string
  /** the phrase the generator writes into posting text (a prefLabel or altLabel of the concept) */
  phrase: string
  /** share of postings mentioning it at month 0 (for emerging: at startMonth) */
  baseShare: number
  shape: PlantedShape
  /** state the curves stage is expected to report at the end of the demo period */
  expectedState: 'emerging' | 'rising' | 'steady' | 'declining' | 'fading'
}

export const DEMO_MONTHS = 36

export const PLANTED_SKILLS: readonly PlantedSkill[] = [
  // emerging from nothing in the middle of the period
  { id: 'prompt-engineering', phrase: 'prompt engineering', baseShare: 0.01, shape: { kind: 'emerging', startMonth: 14, annualGrowth: 2.5 }, expectedState: 'emerging' },
  { id: 'retrieval-augmented-generation', phrase: 'retrieval-augmented generation', baseShare: 0.006, shape: { kind: 'emerging', startMonth: 20, annualGrowth: 3.0 }, expectedState: 'emerging' },
  { id: 'vector-databases', phrase: 'vector databases', baseShare: 0.008, shape: { kind: 'emerging', startMonth: 18, annualGrowth: 2.0 }, expectedState: 'emerging' },
  { id: 'ai-governance', phrase: 'AI governance', baseShare: 0.005, shape: { kind: 'emerging', startMonth: 22, annualGrowth: 2.2 }, expectedState: 'emerging' },
  // rising through the whole period
  { id: 'kubernetes', phrase: 'Kubernetes', baseShare: 0.06, shape: { kind: 'rising', annualGrowth: 0.35 }, expectedState: 'rising' },
  { id: 'terraform', phrase: 'Terraform', baseShare: 0.04, shape: { kind: 'rising', annualGrowth: 0.4 }, expectedState: 'rising' },
  { id: 'rust', phrase: 'Rust', baseShare: 0.015, shape: { kind: 'rising', annualGrowth: 0.5 }, expectedState: 'rising' },
  { id: 'mlops', phrase: 'MLOps', baseShare: 0.02, shape: { kind: 'rising', annualGrowth: 0.45 }, expectedState: 'rising' },
  { id: 'platform-engineering', phrase: 'platform engineering', baseShare: 0.02, shape: { kind: 'rising', annualGrowth: 0.4 }, expectedState: 'rising' },
  { id: 'finops', phrase: 'FinOps', baseShare: 0.01, shape: { kind: 'rising', annualGrowth: 0.6 }, expectedState: 'rising' },
  { id: 'typescript', phrase: 'TypeScript', baseShare: 0.07, shape: { kind: 'rising', annualGrowth: 0.25 }, expectedState: 'rising' },
  { id: 'cognitive-flexibility', phrase: 'cognitive flexibility', baseShare: 0.03, shape: { kind: 'rising', annualGrowth: 0.3 }, expectedState: 'rising' },
  { id: 'data-privacy', phrase: 'data privacy', baseShare: 0.03, shape: { kind: 'rising', annualGrowth: 0.3 }, expectedState: 'rising' },
  // steady
  { id: 'python', phrase: 'Python', baseShare: 0.18, shape: { kind: 'steady' }, expectedState: 'steady' },
  { id: 'sql', phrase: 'SQL', baseShare: 0.2, shape: { kind: 'steady' }, expectedState: 'steady' },
  { id: 'java', phrase: 'Java', baseShare: 0.12, shape: { kind: 'steady' }, expectedState: 'steady' },
  { id: 'linux', phrase: 'Linux', baseShare: 0.1, shape: { kind: 'steady' }, expectedState: 'steady' },
  { id: 'go', phrase: 'Go', baseShare: 0.04, shape: { kind: 'steady' }, expectedState: 'steady' },
  { id: 'microsoft-excel', phrase: 'Excel', baseShare: 0.1, shape: { kind: 'steady' }, expectedState: 'steady' },
  { id: 'communication', phrase: 'communication skills', baseShare: 0.3, shape: { kind: 'steady' }, expectedState: 'steady' },
  { id: 'negotiation', phrase: 'negotiation', baseShare: 0.06, shape: { kind: 'steady' }, expectedState: 'steady' },
  { id: 'project-management', phrase: 'project management', baseShare: 0.1, shape: { kind: 'steady' }, expectedState: 'steady' },
  { id: 'stakeholder-management', phrase: 'stakeholder management', baseShare: 0.07, shape: { kind: 'steady' }, expectedState: 'steady' },
  { id: 'critical-thinking', phrase: 'critical thinking', baseShare: 0.05, shape: { kind: 'steady' }, expectedState: 'steady' },
  { id: 'emotional-intelligence', phrase: 'emotional intelligence', baseShare: 0.03, shape: { kind: 'steady' }, expectedState: 'steady' },
  // declining with half-lives of two to eight years
  { id: 'hadoop', phrase: 'Hadoop', baseShare: 0.05, shape: { kind: 'declining', halfLifeYears: 2 }, expectedState: 'declining' },
  { id: 'angularjs', phrase: 'AngularJS', baseShare: 0.04, shape: { kind: 'declining', halfLifeYears: 2.5 }, expectedState: 'declining' },
  { id: 'jquery', phrase: 'jQuery', baseShare: 0.06, shape: { kind: 'declining', halfLifeYears: 3 }, expectedState: 'declining' },
  { id: 'perl', phrase: 'Perl', baseShare: 0.03, shape: { kind: 'declining', halfLifeYears: 4 }, expectedState: 'declining' },
  { id: 'manual-testing', phrase: 'manual testing', baseShare: 0.05, shape: { kind: 'declining', halfLifeYears: 5 }, expectedState: 'declining' },
  { id: 'vmware-vsphere', phrase: 'vSphere', baseShare: 0.04, shape: { kind: 'declining', halfLifeYears: 6 }, expectedState: 'declining' },
  { id: 'php', phrase: 'PHP', baseShare: 0.06, shape: { kind: 'declining', halfLifeYears: 8 }, expectedState: 'declining' },
  // fading out: already rare and still falling fast
  { id: 'adobe-flash', phrase: 'Adobe Flash', baseShare: 0.008, shape: { kind: 'fading', halfLifeYears: 1.2 }, expectedState: 'fading' },
  { id: 'silverlight', phrase: 'Silverlight', baseShare: 0.006, shape: { kind: 'fading', halfLifeYears: 1.5 }, expectedState: 'fading' },
  { id: 'visual-basic-6', phrase: 'Visual Basic 6', baseShare: 0.007, shape: { kind: 'fading', halfLifeYears: 1.5 }, expectedState: 'fading' },
  // steady, then declining for the last ten months (a change point)
  { id: 'jenkins', phrase: 'Jenkins', baseShare: 0.06, shape: { kind: 'change', breakMonth: 26, halfLifeYears: 1.5 }, expectedState: 'declining' },
  { id: 'soap-web-services', phrase: 'SOAP web services', baseShare: 0.03, shape: { kind: 'change', breakMonth: 24, halfLifeYears: 2 }, expectedState: 'declining' },
]
