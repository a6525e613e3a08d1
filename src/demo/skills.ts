/**
 * @module demo/skills
 * The skills the demo's postings and requests mention: the planted skills of planted.ts with the
 * roles that ask for them and the phrases used for them, background skills at steady rates, and two
 * invented tool names that the taxonomy does not know (so candidate-term discovery has something to
 * find). Every phrase is a prefLabel or altLabel of its concept in taxonomy/skills.csv (checked by
 * test/demo/text.test.ts), and no background skill has a planted skill among its broader concepts.
 */
import { DEMO_MONTHS, PLANTED_SKILLS, type PlantedShape } from './planted.ts'
import type { RoleKey } from './org.ts'

export type SkillGroup = 'hard' | 'soft'

export interface DemoSkill {
  /** taxonomy concept id (or, for invented terms, the term's slug) */
  id: string
  /** phrases written into posting text; the first is the main one */
  phrases: readonly string[]
  /** phrase to use when the skill is the only one in its sentence (labels that are also common words need company) */
  solo: string
  group: SkillGroup
  /** roles that ask for it; 'all' for every role */
  roles: readonly RoleKey[] | 'all'
  /** share of all postings mentioning it at month 0 (emerging: at its start month) */
  baseShare: number
  shape: PlantedShape
  kind: 'planted' | 'background' | 'invented'
  /** weight of the skill in internal training requests (0 = never asked for) */
  internal: number
  /** planted skills among its broader concepts in the taxonomy (a matcher that rolls up counts it there too) */
  rollsUpTo: readonly string[]
}

interface Extra {
  phrases: readonly string[]
  solo?: string
  roles: readonly RoleKey[] | 'all'
  internal?: number
}

/** Roles and phrases of each planted skill (its phrase in planted.ts stays first). */
const PLANTED_EXTRA: Record<string, Extra> = {
  'prompt-engineering': { phrases: ['prompt engineering', 'prompt design', 'prompt writing'], roles: ['swe', 'ds', 'da', 'pm', 'ba', 'cs'], internal: 1.4 },
  'retrieval-augmented-generation': { phrases: ['retrieval-augmented generation', 'RAG pipelines', 'retrieval augmented generation', 'RAG'], solo: 'retrieval-augmented generation', roles: ['swe', 'ds'], internal: 1.2 },
  'vector-databases': { phrases: ['vector databases', 'vector database', 'vector search', 'vector stores'], roles: ['swe', 'ds', 'cloud'], internal: 1 },
  'ai-governance': { phrases: ['AI governance', 'responsible AI', 'AI risk management'], roles: ['sec', 'pm', 'ba', 'ds', 'hr'], internal: 1.2 },
  kubernetes: { phrases: ['Kubernetes', 'K8s', 'Kubernetes administration'], roles: ['cloud', 'sre', 'swe', 'lead'], internal: 1.2 },
  terraform: { phrases: ['Terraform', 'HashiCorp Terraform'], roles: ['cloud', 'sre'], internal: 1 },
  rust: { phrases: ['Rust', 'Rust programming language'], solo: 'Rust programming language', roles: ['swe'], internal: 0.6 },
  mlops: { phrases: ['MLOps'], roles: ['ds', 'cloud', 'sre'], internal: 1 },
  'platform-engineering': { phrases: ['platform engineering', 'internal developer platforms'], roles: ['cloud', 'sre', 'swe', 'lead'], internal: 0.8 },
  finops: { phrases: ['FinOps', 'cloud cost management', 'cloud cost optimisation'], roles: ['cloud', 'fin'], internal: 0.8 },
  typescript: { phrases: ['TypeScript'], roles: ['swe', 'qa', 'lead'], internal: 1 },
  'cognitive-flexibility': { phrases: ['cognitive flexibility', 'flexible thinking', 'adaptive thinking'], roles: 'all', internal: 0.5 },
  'data-privacy': { phrases: ['data privacy', 'data protection', 'privacy engineering'], roles: ['sec', 'ba', 'da', 'hr', 'pm', 'ds'], internal: 1 },
  python: { phrases: ['Python', 'Python 3'], roles: ['swe', 'da', 'ds', 'cloud', 'sre', 'qa', 'sec'], internal: 1 },
  sql: { phrases: ['SQL', 'SQL queries'], roles: ['da', 'ds', 'ba', 'swe', 'fin', 'qa'], internal: 0.8 },
  java: { phrases: ['Java', 'Core Java', 'Java SE'], roles: ['swe', 'qa', 'lead'], internal: 0.6 },
  linux: { phrases: ['Linux', 'Linux administration', 'Linux server administration'], roles: ['cloud', 'sre', 'sec', 'swe'], internal: 0.6 },
  go: { phrases: ['Go', 'Golang'], solo: 'Golang', roles: ['swe', 'cloud', 'sre'], internal: 0.6 },
  'microsoft-excel': { phrases: ['Excel', 'Microsoft Excel', 'advanced Excel', 'MS Excel'], solo: 'Microsoft Excel', roles: ['da', 'ba', 'fin', 'sales', 'hr', 'projm', 'pm', 'cs'], internal: 1 },
  communication: { phrases: ['communication skills', 'written and verbal communication', 'effective communication'], roles: 'all', internal: 0.5 },
  negotiation: { phrases: ['negotiation', 'negotiation skills'], roles: ['sales', 'cs', 'pm', 'projm', 'hr', 'fin'], internal: 0.6 },
  'project-management': { phrases: ['project management', 'project planning'], roles: ['projm', 'pm', 'lead', 'ba'], internal: 0.7 },
  'stakeholder-management': { phrases: ['stakeholder management', 'stakeholder engagement'], roles: ['pm', 'projm', 'ba', 'lead', 'cs'], internal: 0.6 },
  'critical-thinking': { phrases: ['critical thinking', 'critical analysis'], roles: 'all', internal: 0.4 },
  'emotional-intelligence': { phrases: ['emotional intelligence'], roles: 'all', internal: 0.5 },
  hadoop: { phrases: ['Hadoop', 'Apache Hadoop', 'HDFS'], roles: ['ds', 'da', 'swe'], internal: 0.8 },
  angularjs: { phrases: ['AngularJS', 'Angular.js'], roles: ['swe', 'qa'], internal: 0.8 },
  jquery: { phrases: ['jQuery'], roles: ['swe', 'qa'], internal: 0.6 },
  perl: { phrases: ['Perl', 'Perl scripting'], roles: ['swe', 'sre', 'sec'], internal: 0.6 },
  'manual-testing': { phrases: ['manual testing', 'manual test execution'], roles: ['qa'], internal: 0.8 },
  'vmware-vsphere': { phrases: ['vSphere', 'VMware vSphere', 'VMware ESXi'], roles: ['cloud', 'sre', 'sec'], internal: 0.8 },
  php: { phrases: ['PHP', 'PHP 8'], roles: ['swe'], internal: 0.6 },
  'adobe-flash': { phrases: ['Adobe Flash', 'Flash development'], solo: 'Adobe Flash', roles: ['swe'], internal: 0.8 },
  silverlight: { phrases: ['Silverlight', 'Microsoft Silverlight'], roles: ['swe'], internal: 0.8 },
  'visual-basic-6': { phrases: ['Visual Basic 6', 'VB6'], roles: ['swe', 'fin'], internal: 0.8 },
  jenkins: { phrases: ['Jenkins', 'Jenkins pipelines'], roles: ['swe', 'qa', 'sre', 'cloud'], internal: 0.8 },
  'soap-web-services': { phrases: ['SOAP web services', 'SOAP/WSDL', 'SOAP services'], roles: ['swe', 'qa'], internal: 0.6 },
}

const STEADY: PlantedShape = { kind: 'steady' }

/**
 * Demo skills whose broader concepts (transitively, in taxonomy/skills.csv) include a planted skill.
 * All of them roll up into steady planted skills only, so a roll-up changes a level, never a shape.
 */
const ROLLUPS: Record<string, readonly string[]> = {
  negotiation: ['communication'],
  'agile-methodologies': ['project-management'],
  scrum: ['project-management'],
  jira: ['project-management'],
  confluence: ['project-management'],
  'budget-management': ['project-management'],
  'user-stories': ['project-management'],
  pandas: ['python'],
  django: ['python'],
  dbt: ['sql'],
  'spring-boot': ['java'],
}

/** [id, base share, roles, phrases...] of the background skills (steady; invented shares). */
const BACKGROUND: readonly [string, number, readonly RoleKey[] | 'all', ...string[]][] = [
  ['javascript', 0.08, ['swe', 'qa', 'lead'], 'JavaScript', 'ES6'],
  ['react', 0.06, ['swe'], 'React', 'React.js', 'ReactJS'],
  ['node-js', 0.04, ['swe'], 'Node.js', 'NodeJS'],
  ['docker', 0.08, ['swe', 'cloud', 'sre', 'ds'], 'Docker', 'Docker containers'],
  ['amazon-web-services', 0.1, ['cloud', 'sre', 'swe', 'ds', 'sec'], 'AWS', 'Amazon Web Services'],
  ['microsoft-azure', 0.07, ['cloud', 'sre', 'swe', 'sec'], 'Azure', 'Microsoft Azure'],
  ['google-cloud-platform', 0.03, ['cloud', 'ds'], 'GCP', 'Google Cloud'],
  ['git', 0.07, ['swe', 'qa', 'ds', 'cloud', 'sre'], 'Git'],
  ['rest-apis', 0.06, ['swe', 'qa'], 'REST APIs', 'RESTful services'],
  ['ci-cd', 0.07, ['swe', 'cloud', 'sre', 'qa'], 'CI/CD', 'CI/CD pipelines', 'continuous integration'],
  ['agile-methodologies', 0.08, ['swe', 'qa', 'pm', 'projm', 'ba', 'lead'], 'Agile', 'agile delivery', 'agile ways of working'],
  ['scrum', 0.04, ['pm', 'projm', 'lead', 'swe'], 'Scrum', 'sprint planning'],
  ['tableau', 0.03, ['da', 'ba'], 'Tableau'],
  ['power-bi', 0.05, ['da', 'ba', 'fin'], 'Power BI'],
  ['machine-learning', 0.06, ['ds', 'da'], 'machine learning', 'ML models'],
  ['statistics', 0.05, ['ds', 'da'], 'statistics', 'statistical modelling', 'statistical analysis'],
  ['data-visualization', 0.04, ['da', 'ds', 'ba'], 'data visualisation', 'data visualization'],
  ['pytorch', 0.02, ['ds'], 'PyTorch'],
  ['tensorflow', 0.015, ['ds'], 'TensorFlow'],
  ['pandas', 0.03, ['ds', 'da'], 'pandas'],
  ['apache-spark', 0.03, ['ds', 'da', 'swe'], 'Apache Spark', 'Spark'],
  ['apache-airflow', 0.02, ['ds', 'da', 'cloud'], 'Apache Airflow', 'Airflow'],
  ['dbt', 0.015, ['da', 'ds'], 'dbt'],
  ['snowflake', 0.02, ['da', 'ds'], 'Snowflake'],
  ['c-sharp', 0.04, ['swe'], 'C#'],
  ['dot-net', 0.04, ['swe'], '.NET', '.NET Core'],
  ['html', 0.03, ['swe', 'qa'], 'HTML5', 'HTML'],
  ['css', 0.03, ['swe'], 'CSS'],
  ['graphql', 0.015, ['swe'], 'GraphQL'],
  ['microservices', 0.04, ['swe', 'cloud', 'lead'], 'microservices', 'microservice architecture'],
  ['ansible', 0.025, ['cloud', 'sre'], 'Ansible'],
  ['prometheus', 0.02, ['sre', 'cloud'], 'Prometheus'],
  ['grafana', 0.02, ['sre', 'cloud', 'da'], 'Grafana'],
  ['networking', 0.03, ['cloud', 'sre', 'sec'], 'networking', 'network engineering'],
  ['siem', 0.02, ['sec'], 'SIEM', 'Microsoft Sentinel'],
  ['penetration-testing', 0.015, ['sec'], 'penetration testing', 'pen testing'],
  ['incident-response', 0.025, ['sec', 'sre'], 'incident response'],
  ['iso-27001', 0.015, ['sec'], 'ISO 27001'],
  ['selenium', 0.025, ['qa'], 'Selenium', 'Selenium WebDriver'],
  ['test-automation', 0.04, ['qa', 'swe'], 'test automation', 'automated testing'],
  ['cypress', 0.012, ['qa'], 'Cypress'],
  ['jira', 0.05, ['pm', 'projm', 'ba', 'qa', 'lead'], 'Jira'],
  ['confluence', 0.025, ['pm', 'projm', 'ba'], 'Confluence'],
  ['product-roadmapping', 0.02, ['pm'], 'product roadmaps', 'roadmap planning'],
  ['user-research', 0.015, ['pm', 'ba'], 'user research'],
  ['a-b-testing', 0.015, ['pm', 'da', 'ds'], 'A/B testing'],
  ['okrs', 0.012, ['pm', 'lead'], 'OKRs'],
  ['budget-management', 0.03, ['projm', 'fin', 'lead'], 'budget management', 'budgeting'],
  ['financial-modelling', 0.025, ['fin'], 'financial modelling'],
  ['financial-forecasting', 0.02, ['fin'], 'financial forecasting', 'FP&A'],
  ['accounting', 0.02, ['fin'], 'accounting'],
  ['salesforce', 0.03, ['sales', 'cs'], 'Salesforce'],
  ['crm-systems', 0.03, ['sales', 'cs'], 'CRM systems', 'CRM'],
  ['lead-generation', 0.025, ['sales'], 'lead generation', 'prospecting'],
  ['account-management', 0.03, ['sales', 'cs'], 'account management', 'key account management'],
  ['recruitment', 0.02, ['hr'], 'recruitment', 'talent acquisition'],
  ['employee-relations', 0.015, ['hr'], 'employee relations'],
  ['employment-law', 0.012, ['hr'], 'employment law', 'employment legislation'],
  ['payroll', 0.01, ['hr', 'fin'], 'payroll'],
  ['change-management', 0.03, ['hr', 'projm', 'ba', 'lead'], 'change management'],
  ['risk-management', 0.04, ['projm', 'sec', 'fin', 'ba'], 'risk management', 'risk assessment'],
  ['requirements-gathering', 0.03, ['ba', 'pm'], 'requirements gathering', 'requirements elicitation'],
  ['process-mapping', 0.02, ['ba'], 'process mapping', 'BPMN'],
  ['observability', 0.02, ['sre', 'cloud'], 'observability', 'OpenTelemetry'],
  ['vulnerability-management', 0.015, ['sec'], 'vulnerability management'],
  ['cloud-security', 0.015, ['sec', 'cloud'], 'cloud security'],
  ['identity-and-access-management', 0.015, ['sec', 'cloud'], 'identity and access management'],
  ['user-stories', 0.02, ['pm', 'ba'], 'user stories', 'acceptance criteria'],
  ['business-case-development', 0.01, ['ba', 'pm', 'fin'], 'business cases'],
  ['customer-success', 0.03, ['cs'], 'customer success', 'customer retention'],
  ['b2b-sales', 0.03, ['sales'], 'B2B sales', 'consultative selling'],
  ['sales-pipeline-management', 0.02, ['sales'], 'pipeline management', 'sales forecasting'],
  ['performance-management', 0.015, ['hr', 'lead'], 'performance management'],
  ['workforce-planning', 0.01, ['hr'], 'workforce planning'],
  ['hris', 0.01, ['hr'], 'HRIS', 'HR systems'],
  ['financial-reporting', 0.02, ['fin'], 'financial reporting', 'month-end close'],
  ['postgresql', 0.03, ['swe', 'da'], 'PostgreSQL', 'Postgres'],
  ['apache-kafka', 0.02, ['swe', 'ds', 'cloud'], 'Apache Kafka', 'Kafka'],
  ['spring-boot', 0.02, ['swe'], 'Spring Boot'],
  ['django', 0.012, ['swe'], 'Django'],
  ['unit-testing', 0.03, ['swe', 'qa'], 'unit testing'],
  ['performance-testing', 0.015, ['qa', 'sre'], 'performance testing', 'load testing'],
  ['teamwork', 0.12, 'all', 'teamwork', 'team player'],
  ['problem-solving', 0.12, 'all', 'problem solving', 'problem-solving skills'],
  ['time-management', 0.05, 'all', 'time management'],
  ['leadership', 0.06, ['lead', 'projm', 'pm'], 'leadership', 'leadership skills'],
  ['coaching', 0.02, ['lead', 'hr'], 'coaching'],
  ['mentoring', 0.03, ['lead', 'swe'], 'mentoring'],
  ['attention-to-detail', 0.06, 'all', 'attention to detail'],
  ['people-management', 0.03, ['lead', 'projm', 'hr'], 'people management', 'line management'],
]

const SOFT_BACKGROUND = new Set(['teamwork', 'problem-solving', 'time-management', 'leadership', 'coaching', 'mentoring', 'attention-to-detail', 'people-management'])
const SOFT_PLANTED = new Set(['communication', 'negotiation', 'critical-thinking', 'emotional-intelligence', 'cognitive-flexibility', 'stakeholder-management'])

/**
 * Invented tool names that no taxonomy knows; both rise through the period so the candidate-term
 * discovery of the map stage has something real to find.
 */
export const INVENTED_TERMS: readonly DemoSkill[] = [
  {
    id: 'quillstream', phrases: ['Quillstream'], solo: 'Quillstream', group: 'hard', roles: ['swe', 'ds', 'cloud'],
    baseShare: 0.006, shape: { kind: 'emerging', startMonth: 10, annualGrowth: 1.8 }, kind: 'invented', internal: 0.8, rollsUpTo: [],
  },
  {
    id: 'brackenmesh', phrases: ['Brackenmesh'], solo: 'Brackenmesh', group: 'hard', roles: ['cloud', 'sre'],
    baseShare: 0.005, shape: { kind: 'emerging', startMonth: 18, annualGrowth: 2.0 }, kind: 'invented', internal: 0.6, rollsUpTo: [],
  },
]

/** Every skill the demo writes about, planted first, then background, then invented terms. */
export function demoSkills(): DemoSkill[] {
  const planted = PLANTED_SKILLS.map((p): DemoSkill => {
    const extra = PLANTED_EXTRA[p.id]
    if (!extra) throw new Error(`planted skill ${p.id} has no roles and phrases in demo/skills.ts`)
    const phrases = extra.phrases[0] === p.phrase ? extra.phrases : [p.phrase, ...extra.phrases.filter((x) => x !== p.phrase)]
    return {
      id: p.id, phrases, solo: extra.solo ?? phrases[0]!, group: SOFT_PLANTED.has(p.id) ? 'soft' : 'hard', roles: extra.roles,
      baseShare: p.baseShare, shape: p.shape, kind: 'planted', internal: extra.internal ?? 0.5, rollsUpTo: ROLLUPS[p.id] ?? [],
    }
  })
  const background = BACKGROUND.map(([id, share, roles, ...phrases]): DemoSkill => ({
    id, phrases, solo: phrases[0]!, group: SOFT_BACKGROUND.has(id) ? 'soft' : 'hard', roles, baseShare: share, shape: STEADY,
    kind: 'background', internal: 0.25, rollsUpTo: ROLLUPS[id] ?? [],
  }))
  return [...planted, ...background, ...INVENTED_TERMS]
}

/**
 * The share of postings that mention a skill in month `t` of a period of `months` months.
 * Start and break months are given for the 36-month period and scale with the period's length.
 * @example
 * shareAt({ kind: 'declining', halfLifeYears: 2 }, 0.05, 24, 36) // => 0.025
 */
export function shareAt(shape: PlantedShape, base: number, t: number, months: number): number {
  const scale = months / DEMO_MONTHS
  switch (shape.kind) {
    case 'steady':
      return base
    case 'rising':
      return base * Math.pow(1 + shape.annualGrowth, t / 12)
    case 'emerging': {
      const start = Math.round(shape.startMonth * scale)
      // a trickle of early mentions before the skill takes off ("near zero")
      return t < start ? base * 0.04 : base * Math.pow(1 + shape.annualGrowth, (t - start) / 12)
    }
    case 'declining':
    case 'fading':
      return base * Math.pow(2, -t / (12 * shape.halfLifeYears))
    case 'change': {
      const brk = Math.round(shape.breakMonth * scale)
      return t < brk ? base : base * Math.pow(2, -(t - brk) / (12 * shape.halfLifeYears))
    }
  }
}
