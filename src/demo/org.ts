/**
 * @module demo/org
 * Fernhollow Cooperative, the demo's fictional organisation: its roles, teams, role requirements and
 * the external job market its roles are hired from. Every name here is invented.
 *
 * Text written here ends up in posting bodies, so it must never contain a label of a planted skill
 * (test/demo/text.test.ts scans it against the shipped taxonomy); a title that names a planted skill
 * declares it in `implied` so the scenario's ground truth counts it.
 */

export type RoleKey =
  | 'swe' | 'da' | 'ds' | 'cloud' | 'sec' | 'sre' | 'qa' | 'pm' | 'projm' | 'ba' | 'sales' | 'cs' | 'hr' | 'fin' | 'lead'

export interface DemoRole {
  key: RoleKey
  /** role name as in people.csv, roles.csv and JobPosting.occupationalCategory */
  name: string
  /** share of external postings (normalised over roles) */
  marketShare: number
  /** Fernhollow headcount before scaling to the requested number of people */
  headcount: number
  /** posting title variants */
  titles: readonly string[]
  teams: readonly string[]
  /** responsibilities sentences for posting bodies */
  duties: readonly string[]
  /** planted skill ids every posting of this role mentions through its title */
  implied: readonly string[]
  /** role requirements: skill id and required theta */
  requires: readonly (readonly [string, number])[]
}

export const ROLES: readonly DemoRole[] = [
  {
    key: 'swe', name: 'Software Engineer', marketShare: 0.18, headcount: 520,
    titles: ['Software Engineer', 'Software Developer', 'Backend Engineer', 'Application Developer', 'Full Stack Developer'],
    teams: ['Member App', 'Payments Core', 'Ledger Services', 'Web Channels', 'Integration Hub'],
    duties: [
      'Design, build and maintain services used by thousands of customers every day.',
      'Review code and pair with colleagues to keep the codebase healthy.',
      'Turn product ideas into well-tested features, from the first sketch to release.',
      'Improve the reliability and speed of our core services.',
      'Write clear technical documentation and share what you learn.',
      'Take part in design discussions and help choose the right trade-offs.',
    ],
    implied: [],
    requires: [['java', 0.5], ['python', 0.3], ['typescript', 0.5], ['sql', 0.2], ['kubernetes', 0.0], ['jenkins', -0.2], ['php', 0.0], ['prompt-engineering', -0.3]],
  },
  {
    key: 'da', name: 'Data Analyst', marketShare: 0.08, headcount: 210,
    titles: ['Data Analyst', 'Reporting Analyst', 'Insight Analyst', 'BI Analyst'],
    teams: ['Data and Insight', 'Member Insight'],
    duties: [
      'Answer business questions with clear, well-checked analysis.',
      'Build and maintain the reports that teams rely on each week.',
      'Work with product and finance colleagues to define the right measures.',
      'Explain findings to non-specialist audiences in plain language.',
      'Spot data quality issues early and work with owners to fix them.',
    ],
    implied: [],
    requires: [['sql', 0.6], ['microsoft-excel', 0.5], ['python', 0.0], ['communication', 0.3], ['critical-thinking', 0.3], ['data-privacy', -0.2]],
  },
  {
    key: 'ds', name: 'Data Scientist', marketShare: 0.06, headcount: 110,
    titles: ['Data Scientist', 'Machine Learning Scientist', 'Applied Scientist'],
    teams: ['Data and Insight', 'Pricing Science'],
    duties: [
      'Build models that help us price fairly and serve members better.',
      'Take models from exploration to production with engineering colleagues.',
      'Design experiments and judge their results with care.',
      'Keep an eye on model drift and retrain when the world changes.',
    ],
    implied: [],
    requires: [['python', 0.8], ['sql', 0.5], ['mlops', 0.2], ['prompt-engineering', 0.3], ['hadoop', -0.3], ['data-privacy', 0.0], ['critical-thinking', 0.4]],
  },
  {
    key: 'cloud', name: 'Cloud Engineer', marketShare: 0.07, headcount: 150,
    titles: ['Cloud Engineer', 'Cloud Infrastructure Engineer', 'DevOps Engineer', 'Infrastructure Engineer'],
    teams: ['Cloud Foundations', 'Hosting'],
    duties: [
      'Build and run the infrastructure our products are hosted on.',
      'Automate repetitive operational work so the team can focus on improvements.',
      'Help product teams ship safely and often.',
      'Keep our environments patched, observable and cost-aware.',
      'Take part in a fair, well-supported on-call rota.',
    ],
    implied: [],
    requires: [['kubernetes', 0.6], ['terraform', 0.5], ['linux', 0.5], ['vmware-vsphere', 0.0], ['go', 0.0], ['finops', 0.0], ['jenkins', 0.0]],
  },
  {
    key: 'sec', name: 'Security Analyst', marketShare: 0.05, headcount: 100,
    titles: ['Security Analyst', 'Cyber Security Analyst', 'SOC Analyst', 'Information Security Analyst'],
    teams: ['Security Office'],
    duties: [
      'Monitor alerts and investigate suspicious activity across our estate.',
      'Work with engineering teams to fix weaknesses before they are exploited.',
      'Keep our security controls and evidence in good order for audits.',
      'Run tabletop exercises and improve our playbooks.',
    ],
    implied: [],
    requires: [['linux', 0.4], ['python', 0.0], ['data-privacy', 0.6], ['ai-governance', 0.0], ['critical-thinking', 0.5]],
  },
  {
    key: 'sre', name: 'Site Reliability Engineer', marketShare: 0.05, headcount: 110,
    titles: ['Site Reliability Engineer', 'Reliability Engineer', 'Production Engineer'],
    teams: ['Reliability', 'Cloud Foundations'],
    duties: [
      'Define service level objectives with product teams and help meet them.',
      'Lead calm, blameless reviews after incidents and follow up on the actions.',
      'Reduce toil through automation and better tooling.',
      'Make our systems easier to understand when something goes wrong.',
    ],
    implied: [],
    requires: [['linux', 0.7], ['kubernetes', 0.6], ['go', 0.3], ['python', 0.3], ['terraform', 0.3], ['perl', -0.5]],
  },
  {
    key: 'qa', name: 'QA Engineer', marketShare: 0.05, headcount: 150,
    titles: ['QA Engineer', 'Test Engineer', 'Quality Assurance Analyst', 'Software Tester'],
    teams: ['Member App', 'Payments Core', 'Web Channels'],
    duties: [
      'Plan and carry out testing for new features and releases.',
      'Work with developers to prevent defects, not only to find them.',
      'Keep our test suites fast, reliable and meaningful.',
      'Report defects clearly and follow them through to a fix.',
    ],
    implied: [],
    requires: [['manual-testing', 0.3], ['java', 0.0], ['typescript', 0.0], ['jenkins', 0.0], ['sql', 0.0]],
  },
  {
    key: 'pm', name: 'Product Manager', marketShare: 0.05, headcount: 90,
    titles: ['Product Manager', 'Product Owner', 'Digital Product Manager'],
    teams: ['Member App', 'Payments Core', 'Lending Products'],
    duties: [
      'Set the direction for a product area and explain the reasons behind it.',
      'Talk to members regularly and turn what you learn into clear priorities.',
      'Work closely with design and engineering to ship the right things.',
      'Measure outcomes and change course when the evidence says so.',
    ],
    implied: [],
    requires: [['stakeholder-management', 0.6], ['communication', 0.6], ['prompt-engineering', 0.0], ['ai-governance', 0.0], ['microsoft-excel', 0.2], ['critical-thinking', 0.4]],
  },
  {
    key: 'projm', name: 'Project Manager', marketShare: 0.06, headcount: 140,
    titles: ['Project Manager', 'IT Project Manager', 'Technical Project Manager', 'Project Manager (Digital)'],
    teams: ['Change Office', 'Branch Transformation'],
    duties: [
      'Run projects from start-up to close, keeping scope, time and cost in balance.',
      'Keep plans, risks and dependencies visible to everyone involved.',
      'Chair steering meetings and write concise status reports.',
      'Coordinate suppliers and internal teams towards shared milestones.',
    ],
    implied: ['project-management'],
    requires: [['project-management', 0.7], ['stakeholder-management', 0.6], ['microsoft-excel', 0.3], ['communication', 0.5], ['negotiation', 0.2]],
  },
  {
    key: 'ba', name: 'Business Analyst', marketShare: 0.06, headcount: 140,
    titles: ['Business Analyst', 'Business Systems Analyst', 'Process Analyst'],
    teams: ['Change Office', 'Lending Products'],
    duties: [
      'Understand how work is done today and describe how it could be done better.',
      'Write clear requirements that developers and testers can act on.',
      'Run workshops that bring different teams to a shared view.',
      'Check that delivered changes solve the problems they were meant to solve.',
    ],
    implied: [],
    requires: [['sql', 0.2], ['microsoft-excel', 0.5], ['stakeholder-management', 0.5], ['critical-thinking', 0.4], ['data-privacy', 0.0]],
  },
  {
    key: 'sales', name: 'Sales Executive', marketShare: 0.09, headcount: 380,
    titles: ['Sales Executive', 'Account Executive', 'Sales Representative', 'Business Development Representative'],
    teams: ['Sales North', 'Sales South', 'Business Banking Sales'],
    duties: [
      'Build a healthy book of business with new and existing customers.',
      'Understand customer needs and propose the right products.',
      'Keep accurate records of every opportunity.',
      'Hit quarterly targets while treating customers fairly.',
    ],
    implied: [],
    requires: [['negotiation', 0.6], ['communication', 0.5], ['microsoft-excel', 0.0], ['emotional-intelligence', 0.3]],
  },
  {
    key: 'cs', name: 'Customer Success Manager', marketShare: 0.06, headcount: 300,
    titles: ['Customer Success Manager', 'Client Success Manager', 'Member Success Manager'],
    teams: ['Member Services', 'Business Banking Service'],
    duties: [
      'Look after a portfolio of business members from welcome to renewal.',
      'Spot members at risk early and agree a plan with them.',
      'Share member feedback with product teams.',
      'Run regular reviews that show members the value they get.',
    ],
    implied: [],
    requires: [['communication', 0.6], ['emotional-intelligence', 0.4], ['negotiation', 0.2], ['microsoft-excel', 0.0]],
  },
  {
    key: 'hr', name: 'HR Partner', marketShare: 0.04, headcount: 110,
    titles: ['HR Partner', 'HR Business Partner', 'People Partner'],
    teams: ['People Team'],
    duties: [
      'Advise managers on people matters, from hiring to organisation design.',
      'Handle sensitive casework with care and fairness.',
      'Use workforce data to spot trends and act on them.',
      'Support leaders through reorganisations and growth.',
    ],
    implied: [],
    requires: [['communication', 0.6], ['emotional-intelligence', 0.6], ['data-privacy', 0.3], ['negotiation', 0.2], ['microsoft-excel', 0.0]],
  },
  {
    key: 'fin', name: 'Finance Analyst', marketShare: 0.05, headcount: 140,
    titles: ['Finance Analyst', 'Financial Analyst', 'Management Accountant', 'Commercial Finance Analyst'],
    teams: ['Finance', 'Treasury'],
    duties: [
      'Prepare monthly results and explain what moved and why.',
      'Build and maintain the models behind our plans.',
      'Partner with budget holders to keep spending on track.',
      'Improve and automate finance processes.',
    ],
    implied: [],
    requires: [['microsoft-excel', 0.8], ['sql', 0.0], ['finops', -0.2], ['critical-thinking', 0.4], ['visual-basic-6', -0.5]],
  },
  {
    key: 'lead', name: 'Team Lead', marketShare: 0.04, headcount: 110,
    titles: ['Team Lead', 'Engineering Team Lead', 'Development Team Lead'],
    teams: ['Member App', 'Payments Core', 'Ledger Services', 'Reliability'],
    duties: [
      'Guide a team of five to eight engineers and help each of them grow.',
      'Shape the team roadmap with product and design partners.',
      'Keep delivery steady and sustainable.',
      'Hire thoughtfully and build an inclusive team culture.',
    ],
    implied: [],
    requires: [['stakeholder-management', 0.5], ['communication', 0.7], ['emotional-intelligence', 0.5], ['kubernetes', 0.0], ['java', 0.2], ['cognitive-flexibility', 0.3], ['critical-thinking', 0.5]],
  },
]

export function roleByKey(key: RoleKey): DemoRole {
  const role = ROLES.find((r) => r.key === key)
  if (!role) throw new Error(`unknown demo role ${key}`)
  return role
}

export const ORGANISATION = 'Fernhollow Cooperative'

/** Invented places for job locations. */
export const PLACES: readonly string[] = [
  'Fernhollow', 'Marrowby', 'Eastwick Quay', 'Lindenholt', 'Saltmarsh Cross', 'Ravensby', 'Oakhurst Vale', 'Pellingford',
  'Thornwick Green', 'Cobbleford', 'Wickham Down', 'Merebrook', 'Harlow Fen', 'Stonebridge Row', 'Kestrel Point', 'Alderby',
]

const EMPLOYER_FIRST = [
  'Ashvale', 'Brindlecombe', 'Corriwell', 'Dovemarsh', 'Embervale', 'Fallowmere', 'Glimmerdown', 'Hollinbrook', 'Ironwold',
  'Juniper Row', 'Kettlewick', 'Larchmont Fen', 'Mossgrove', 'Nettlecombe', 'Orchard Lane', 'Pebblewick', 'Quarrydown',
  'Rookhaven', 'Sedgemoor Vale', 'Tallowbrook', 'Umberfield', 'Vellacott', 'Willowmere', 'Yarrowby', 'Amberlith', 'Bracken Hill',
  'Cloudberry', 'Driftwood', 'Eastmere', 'Foxglove', 'Greywater', 'Heathcote Fen', 'Inglenook', 'Kingfisher Row', 'Lanternfield',
]

const EMPLOYER_SECOND = [
  'Mutual', 'Logistics', 'Health', 'Energy', 'Foods', 'Insurance', 'Software', 'Labs', 'Retail', 'Transit', 'Building Society',
  'Media', 'Works', 'Partners', 'Housing', 'Telecom', 'Credit Union', 'Analytics', 'Outfitters', 'Water', 'Freight',
]

/** Every invented employer name, in a fixed order (first x second word lists). */
export function employerNames(): string[] {
  const out: string[] = []
  for (const a of EMPLOYER_FIRST) for (const b of EMPLOYER_SECOND) out.push(`${a} ${b}`)
  return out
}

/** Invented given names and family names for course owners. */
export const GIVEN_NAMES: readonly string[] = [
  'Ada', 'Bram', 'Cleo', 'Dev', 'Elin', 'Fen', 'Gus', 'Hana', 'Ivo', 'Jun', 'Kit', 'Lior', 'Mira', 'Nia', 'Oren', 'Pia',
  'Rafe', 'Saoirse', 'Tam', 'Una', 'Vik', 'Wren', 'Yara', 'Zeb',
]
export const FAMILY_NAMES: readonly string[] = [
  'Ashdown', 'Brightwater', 'Calloway', 'Dunmore', 'Everleigh', 'Fairweather', 'Greenhalgh', 'Holloway', 'Ingleby', 'Jessop',
  'Kinsella', 'Lockwood', 'Marchbank', 'Northcott', 'Oakley', 'Penrose', 'Quilter', 'Rowntree', 'Sallow', 'Thackeray',
]
