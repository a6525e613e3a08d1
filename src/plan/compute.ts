/**
 * @module plan/compute
 * Gathers the plan stage's inputs from the database and computes every planning output: needs
 * ranking (per skill and per role × skill), suggested role requirements, course flags, reskilling
 * pathways and candidates, and the reskilling forecast. It reads, except that it brings the kept
 * counts per month, title and occupation up to date (db/title-months.ts) inside the caller's
 * transaction; stage.ts writes the outputs.
 */
import crypto from 'node:crypto'
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import * as store from '../db/plan.ts'
import { countCoOccurrence } from './adjacency.ts'
import { flagCourse, type AdjacentRising, type CourseFlag, type CourseSkillInput } from './course-flags.ts'
import { matcherFromDb } from '../taxonomy/store.ts'
import { matcherCodeKey } from '../taxonomy/matcher-cache.ts'
import { taxonomyVersion } from '../db/taxonomy.ts'
import { buildLabelIndex, mapTitle, resolveSkillRef, type LabelIndex } from './course-skills.ts'
import { RISING_STATES, readSkillCurve, type SkillCurve } from './curve-model.ts'
import { rankNeeds, scoreNeed, type NeedInput, type PullInput, type RankedNeed } from './needs.ts'
import { buildPathways, findCandidates, pathwaySkills, type CandidateGroup, type Pathway } from './pathways.ts'
import { forecastTarget, type ForecastTarget, type QuarterForecast } from './reskilling-forecast.ts'
import { readTitleMonths, refreshTitleMonths, type TitleCounts } from '../db/title-months.ts'
import { addMonths, anyRoleMatcher, suggestRequirements, type RoleSuggestion } from './role-suggestions.ts'

export interface RoleNeed extends RankedNeed {
  role: string
  required: boolean
}

/** How a course's skill references resolved, to be written back to course_skills. */
export interface CourseSkillResolution {
  courseId: string
  resolved: { ref: string; skillId: string | null }[]
  /** skills mapped from the title of an untagged course */
  inferred: { ref: string; skillId: string }[]
  /** true when the course had no tags, so inferred rows replace any earlier inferred ones */
  untagged: boolean
}

export interface PlanResult {
  baseMonth: string
  needs: RankedNeed[]
  roleNeeds: RoleNeed[]
  suggestions: RoleSuggestion[]
  courseFlags: CourseFlag[]
  courseSkills: CourseSkillResolution[]
  /** what the course resolutions were made from (a digest; they are kept with it for the next run) and how titles were mapped */
  courseResolutionKey: { inputs: string; method: string }
  pathways: Pathway[]
  candidates: CandidateGroup[]
  forecast: QuarterForecast[]
  assumptions: Record<string, unknown>
}

/** Bumped when the way course tags and titles are resolved changes, so that kept resolutions are made again. */
const COURSE_RESOLUTION_FORMAT = 1

/**
 * A digest of everything a course resolution depends on: every course's title and tags, the
 * taxonomy version (moved on by every change of concepts and labels) and the matcher's code.
 */
function courseResolutionInputs(db: Db, courses: readonly store.CourseRecord[], rows: readonly store.CourseSkillRecord[]): string {
  const tags = new Map<string, string[]>()
  for (const r of rows) if (r.inferred === 0) tags.set(r.course_id, [...(tags.get(r.course_id) ?? []), r.skill_ref])
  const parts = courses.map((c) => [c.course_id, c.title, (tags.get(c.course_id) ?? []).sort()])
  return crypto
    .createHash('sha256')
    .update(JSON.stringify([COURSE_RESOLUTION_FORMAT, taxonomyVersion(db), matcherCodeKey(), parts]))
    .digest('hex')
}

function currentMonth(now: Date): string {
  return `${now.getUTCFullYear()}-${String(now.getUTCMonth() + 1).padStart(2, '0')}`
}

/**
 * Internal-request shares of each skill in the recent and the earlier window, from the demand
 * aggregates the map stage keeps (mapped original requests; the same population the fit uses).
 */
function pullInputs(db: Db, pullMonths: number): Map<string, PullInput> & { windows: { recentTotal: number; earlierTotal: number } } {
  const out = new Map<string, PullInput>() as Map<string, PullInput> & { windows: { recentTotal: number; earlierTotal: number } }
  const latest = store.latestDocumentMonth(db, 'request')
  out.windows = { recentTotal: 0, earlierTotal: 0 }
  if (!latest) return out
  const recentStart = addMonths(latest, -(pullMonths - 1))
  const earlierStart = addMonths(recentStart, -pullMonths)
  const inWindow = (m: string): 'recent' | 'earlier' | null => (m >= recentStart && m <= latest ? 'recent' : m >= earlierStart && m < recentStart ? 'earlier' : null)
  for (const [month, n] of store.requestTotalsByMonth(db)) {
    const w = inWindow(month)
    if (w === 'recent') out.windows.recentTotal += n
    else if (w === 'earlier') out.windows.earlierTotal += n
  }
  for (const r of store.requestMentionCountsByMonth(db)) {
    const w = inWindow(r.month)
    if (!w) continue
    let p = out.get(r.concept_id)
    if (!p) out.set(r.concept_id, (p = { recentMentions: 0, recentTotal: out.windows.recentTotal, earlierMentions: 0, earlierTotal: out.windows.earlierTotal }))
    if (w === 'recent') p.recentMentions += r.n
    else p.earlierMentions += r.n
  }
  return out
}

/**
 * Maps an untagged course's title to concepts: with the taxonomy's own matcher (its case and evidence
 * rules, inflections) when the stored taxonomy builds one, else by whole-word label matching. The
 * matcher is built on the first untagged course only (about 3 s for 20,000 concepts), so a run
 * without untagged courses never builds it.
 */
function titleMapper(db: Db, index: () => LabelIndex): { readonly method: string; map: (title: string) => { id: string; label: string }[] } {
  let map: ((title: string) => { id: string; label: string }[]) | undefined
  let method = 'the taxonomy matcher (not built: no untagged course)'
  const build = (): ((title: string) => { id: string; label: string }[]) => {
    try {
      const matcher = matcherFromDb(db)
      method = 'the taxonomy matcher'
      return (title) =>
        matcher
          .map({ text: title })
          .mentions.map((m) => ({ id: m.conceptId, label: m.spans[0]?.text ?? m.prefLabel }))
          .sort((a, b) => (a.id < b.id ? -1 : a.id > b.id ? 1 : 0))
    } catch {
      method = 'whole-word label matching (the taxonomy matcher could not be built)'
      const labels = index()
      return (title) => mapTitle(labels, title)
    }
  }
  return {
    get method() {
      return method
    },
    map: (title) => (map ??= build())(title),
  }
}

/** Computes every planning output from the current tables. */
export function computePlan(db: Db, config: Config, now: Date = new Date()): PlanResult {
  const cfg = config.plan
  const labels = store.readConceptLabels(db)
  const label = (id: string) => labels.get(id) ?? id
  // the details of curves that are not evidence are left unread, and the forecast bands of all but
  // the rising curves (only the reskilling forecast of evidenced rising skills draws them)
  const curves = new Map<string, SkillCurve>(store.readCurves(db, RISING_STATES).map((r) => [r.concept_id, readSkillCurve(r)]))
  const coverage = store.readCoverage(db)
  const requirementRows = store.readRoleRequirements(db)
  const people = store.readPeople(db)
  const headByRole = store.roleHeadcounts(db)
  const totalHeadcount = people.length
  const abilities = store.readLatestAbilities(db)

  const requirements = new Map<string, Map<string, number>>()
  for (const r of requirementRows) {
    let m = requirements.get(r.role)
    if (!m) requirements.set(r.role, (m = new Map()))
    m.set(r.skill_id, r.required_theta)
  }
  const requirementSets = new Map<string, Set<string>>([...requirements].map(([role, m]) => [role, new Set(m.keys())]))
  const roles = [...new Set([...requirements.keys(), ...headByRole.keys()])].sort()

  const latestPosting = store.latestDocumentMonth(db, 'posting')
  const baseMonth = latestPosting ?? currentMonth(now)
  const adjacencyStart = cfg.adjacency.months > 0 && latestPosting ? addMonths(latestPosting, -(cfg.adjacency.months - 1)) : null
  const suggestionStart = latestPosting ? addMonths(latestPosting, -(2 * cfg.suggestions.recentMonths - 1)) : null
  // the postings of the suggestion windows that match a role, counted per month, title and
  // occupation; the kept counts of months whose postings changed are recomputed first (a write,
  // inside runPlan's transaction)
  let titleCounts: TitleCounts = { concepts: [], rows: [] }
  if (roles.length > 0) {
    refreshTitleMonths(db, suggestionStart)
    titleCounts = readTitleMonths(db, suggestionStart, anyRoleMatcher(roles, cfg))
  }

  const suggestions = suggestRequirements({ roles, requirements: requirementSets, titles: titleCounts, latestMonth: latestPosting, curves, labels }, cfg)
  const suggestedBySkill = new Map<string, RoleSuggestion[]>()
  for (const s of suggestions) {
    const list = suggestedBySkill.get(s.skillId)
    if (list) list.push(s)
    else suggestedBySkill.set(s.skillId, [s])
  }

  // needs per skill
  const pulls = pullInputs(db, cfg.needs.pullMonths)
  const hasRequests = pulls.windows.recentTotal > 0 && pulls.windows.earlierTotal > 0
  const pullFor = (id: string): PullInput | null =>
    hasRequests ? (pulls.get(id) ?? { recentMentions: 0, recentTotal: pulls.windows.recentTotal, earlierMentions: 0, earlierTotal: pulls.windows.earlierTotal }) : null
  const coverageBySkill = new Map<string, store.CoverageRecord[]>()
  for (const c of coverage) {
    const list = coverageBySkill.get(c.skill_id)
    if (list) list.push(c)
    else coverageBySkill.set(c.skill_id, [c])
  }
  const rolesRequiring = new Map<string, string[]>()
  for (const r of requirementRows) {
    const list = rolesRequiring.get(r.skill_id)
    if (list) list.push(r.role)
    else rolesRequiring.set(r.skill_id, [r.role])
  }
  const skills = new Set<string>([...curves.keys(), ...coverageBySkill.keys(), ...rolesRequiring.keys(), ...suggestedBySkill.keys()])
  const head = (role: string) => headByRole.get(role) ?? 0
  const needs = rankNeeds(
    [...skills].map((id) => {
      const input: NeedInput = {
        id,
        label: label(id),
        curve: curves.get(id) ?? null,
        coverage: coverageBySkill.get(id) ?? [],
        requiredHeadcount: (rolesRequiring.get(id) ?? []).reduce((s, r) => s + head(r), 0),
        futureHeadcount: (suggestedBySkill.get(id) ?? []).reduce((s, r) => s + head(r.role), 0),
        totalHeadcount,
        pull: pullFor(id),
      }
      return scoreNeed(input, cfg)
    }),
  )

  // needs per role × skill: every requirement and every suggestion
  const roleNeedInputs: { role: string; required: boolean; input: NeedInput }[] = []
  for (const r of requirementRows) {
    roleNeedInputs.push({
      role: r.role,
      required: true,
      input: {
        id: r.skill_id,
        label: label(r.skill_id),
        curve: curves.get(r.skill_id) ?? null,
        coverage: (coverageBySkill.get(r.skill_id) ?? []).filter((c) => c.role === r.role),
        requiredHeadcount: head(r.role),
        futureHeadcount: 0,
        totalHeadcount,
        pull: pullFor(r.skill_id),
      },
    })
  }
  for (const s of suggestions) {
    roleNeedInputs.push({
      role: s.role,
      required: false,
      input: { id: s.skillId, label: s.label, curve: curves.get(s.skillId) ?? null, coverage: [], requiredHeadcount: 0, futureHeadcount: head(s.role), totalHeadcount, pull: pullFor(s.skillId) },
    })
  }
  const roleNeeds: RoleNeed[] = []
  for (const role of roles) {
    const mine = roleNeedInputs.filter((x) => x.role === role)
    const ranked = rankNeeds(mine.map((x) => scoreNeed(x.input, cfg)))
    for (const r of ranked) roleNeeds.push({ ...r, role, required: mine.find((x) => x.input.id === r.id)!.required })
  }

  // adjacency and pathways
  // pathways ask only for pairs of a declining and a rising skill: only those rows are counted, and
  // PPMI needs nothing but those skills' own mentions (the cosine needs their whole vectors)
  const focus = pathwaySkills(curves)
  const co = countCoOccurrence(store.readConceptLists(db, 'posting', adjacencyStart, cfg.adjacency.method === 'ppmi' ? [...focus].sort() : null), focus)
  const pathways = buildPathways(co, curves, labels, cfg.adjacency)
  const candidates = findCandidates({ people, abilities, requirements, pathways }, cfg.reskilling, true)

  // courses
  // the label index resolves course tags: built on the first course (none: never built)
  let labelIndex: LabelIndex | undefined
  const index = (): LabelIndex => (labelIndex ??= buildLabelIndex(labels.keys(), store.readLabels(db)))
  const titles = titleMapper(db, index)
  const courseSkillRows = store.readCourseSkills(db)
  const courses = store.readCourses(db)
  // the resolutions of the last run, used again while the courses' titles and tags, the taxonomy
  // and the matcher's code are unchanged: the label index and the matcher cost 0.5 s of the plan at
  // 20,000 concepts and 80,000 labels
  const courseInputs = courseResolutionInputs(db, courses, courseSkillRows)
  const kept = store.readKeptCourseResolutions<CourseSkillResolution>(db, courseInputs)
  const adjacent = new Map<string, AdjacentRising[]>(pathways.map((p) => [p.skillId, p.targets.map((t) => ({ id: t.id, label: t.label, score: t.score, support: t.support }))]))
  const courseFlags: CourseFlag[] = []
  const courseSkills: CourseSkillResolution[] = []
  for (const course of courses) {
    const tagged = courseSkillRows.filter((r) => r.course_id === course.course_id && r.inferred === 0)
    const before = kept?.courses.get(course.course_id)
    const resolution: CourseSkillResolution = before ?? { courseId: course.course_id, resolved: [], inferred: [], untagged: tagged.length === 0 }
    if (!before) {
      for (const t of tagged) resolution.resolved.push({ ref: t.skill_ref, skillId: resolveSkillRef(index(), t.skill_ref)?.id ?? null })
      if (!tagged.length) for (const m of titles.map(course.title)) resolution.inferred.push({ ref: m.label, skillId: m.id })
    }
    const inputs: CourseSkillInput[] = []
    const unresolved: string[] = []
    for (const r of resolution.resolved) {
      if (r.skillId === null) unresolved.push(r.ref)
      else if (!inputs.some((i) => i.id === r.skillId)) inputs.push({ ref: r.ref, id: r.skillId, label: label(r.skillId), inferred: false, curve: curves.get(r.skillId) ?? null })
    }
    for (const r of resolution.inferred) inputs.push({ ref: r.ref, id: r.skillId, label: label(r.skillId), inferred: true, curve: curves.get(r.skillId) ?? null })
    courseSkills.push(resolution)
    courseFlags.push(flagCourse(course, inputs, unresolved, adjacent, cfg.courses))
  }
  const courseMethod = kept?.method ?? titles.method

  // reskilling forecast for rising skills that roles require or are going to require
  const thetaOf = new Map<string, number>(abilities.map((a) => [`${a.person_id}\u0000${a.skill_id}`, a.theta]))
  const peopleByRole = new Map<string, string[]>()
  for (const p of people) {
    const list = peopleByRole.get(p.role)
    if (list) list.push(p.person_id)
    else peopleByRole.set(p.role, [p.person_id])
  }
  const candidatesFor = new Map<string, number>()
  for (const g of candidates) for (const t of g.targets) candidatesFor.set(t.id, (candidatesFor.get(t.id) ?? 0) + t.lacking)
  const forecast: QuarterForecast[] = []
  const targets = [...curves.values()].filter((c) => c.evidenced && RISING_STATES.includes(c.state)).sort((a, b) => (a.id < b.id ? -1 : 1))
  for (const curve of targets) {
    const t: ForecastTarget = { id: curve.id, label: label(curve.id), curve, headcount: 0, needNow: 0, expectedMeeting: 0, assessed: 0, unknown: 0, candidatesAvailable: candidatesFor.get(curve.id) ?? 0 }
    for (const role of rolesRequiring.get(curve.id) ?? []) {
      // the coverage row's own headcount when the ability stage has counted it, else the people table
      const cov = (coverageBySkill.get(curve.id) ?? []).find((c) => c.role === role)
      const h = cov ? cov.headcount : head(role)
      t.headcount += h
      t.needNow += h
      if (cov) {
        t.expectedMeeting += cov.expected_meeting
        t.assessed += cov.assessed
        t.unknown += cov.unknown
      } else t.unknown += h
    }
    for (const s of suggestedBySkill.get(curve.id) ?? []) {
      const members = peopleByRole.get(s.role) ?? []
      t.headcount += members.length
      t.needNow += s.recentShare * members.length
      for (const person of members) {
        const theta = thetaOf.get(`${person}\u0000${curve.id}`)
        if (theta === undefined) t.unknown++
        else {
          t.assessed++
          if (theta >= cfg.reskilling.strongTheta) t.expectedMeeting++
        }
      }
    }
    if (t.headcount === 0) continue
    forecast.push(
      ...forecastTarget(t, baseMonth, {
        horizonQuarters: cfg.horizonQuarters,
        attritionRate: cfg.attritionRate,
        hiringRate: cfg.hiringRate,
        seed: cfg.seed,
        reskilling: cfg.reskilling,
        shareFloor: cfg.needs.shareFloor,
      }),
    )
  }

  return {
    baseMonth,
    needs,
    roleNeeds,
    suggestions,
    courseFlags,
    courseSkills,
    courseResolutionKey: { inputs: courseInputs, method: courseMethod },
    pathways,
    candidates,
    forecast,
    assumptions: {
      weights: cfg.weights,
      needs: cfg.needs,
      horizonQuarters: cfg.horizonQuarters,
      attritionRate: cfg.attritionRate,
      hiringRate: cfg.hiringRate,
      reskilling: cfg.reskilling,
      adjacency: { ...cfg.adjacency, postings: co.documents },
      seed: cfg.seed,
      courseSkillMapping: `tags resolved by concept id or label; untagged courses mapped from their titles (inferred) by ${courseMethod}`,
    },
  }
}
