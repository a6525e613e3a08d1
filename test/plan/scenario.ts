/**
 * A small synthetic organisation for the plan stage tests (Fernhollow Cooperative's web and data
 * teams, invented): curves of known states, postings with planted co-occurrence, courses, people.
 */
import type { Db } from '../../src/db/connection.ts'
import { addAbility, addConcept, addCourse, addCoverage, addCurve, addDocument, addPeople, addRole, months } from './fixtures.ts'

export const SCENARIO_MONTHS = months('2024-01', 24)

export function loadScenario(db: Db): void {
  addConcept(db, 'adobe-flash', 'Adobe Flash', ['Flash'])
  addConcept(db, 'html5-canvas', 'HTML5 Canvas')
  addConcept(db, 'jquery', 'jQuery')
  addConcept(db, 'typescript', 'TypeScript', ['TS'])
  addConcept(db, 'html', 'HTML')
  addConcept(db, 'python', 'Python')
  addConcept(db, 'prompt-engineering', 'prompt engineering')
  addConcept(db, 'perl', 'Perl')
  addConcept(db, 'cobol', 'COBOL')

  addCurve(db, { concept_id: 'adobe-flash', state: 'fading', annual_growth: -0.447, growth_low: -0.6, growth_high: -0.3, half_life_months: 14, half_life_low: 10, half_life_high: 20, p_adjusted: 0.001, latest_share: 0.004, forecast_share12: 0.0022 })
  addCurve(db, { concept_id: 'html5-canvas', state: 'rising', annual_growth: 0.4, growth_low: 0.2, growth_high: 0.6, p_adjusted: 0.002, latest_share: 0.05, forecast_share12: 0.07 })
  addCurve(db, { concept_id: 'jquery', state: 'declining', annual_growth: -0.206, growth_low: -0.25, growth_high: -0.16, half_life_months: 36, half_life_low: 30, half_life_high: 45, p_adjusted: 0.001, latest_share: 0.04, forecast_share12: 0.0317 })
  addCurve(db, { concept_id: 'typescript', state: 'rising', annual_growth: 0.25, growth_low: 0.15, growth_high: 0.35, p_adjusted: 0.001, latest_share: 0.07, forecast_share12: 0.0875 })
  addCurve(db, { concept_id: 'html', state: 'steady', annual_growth: 0.0, growth_low: -0.05, growth_high: 0.05, p_adjusted: 0.7, latest_share: 0.1, forecast_share12: 0.1 })
  addCurve(db, { concept_id: 'python', state: 'steady', annual_growth: 0.01, growth_low: -0.04, growth_high: 0.06, p_adjusted: 0.6, latest_share: 0.18, forecast_share12: 0.182 })
  addCurve(db, { concept_id: 'prompt-engineering', state: 'emerging', annual_growth: 2.5, growth_low: 1.5, growth_high: 3.5, p_adjusted: 0.0001, latest_share: 0.02, forecast_share12: 0.07 })
  addCurve(db, { concept_id: 'perl', state: 'declining', annual_growth: -0.083, growth_low: -0.12, growth_high: -0.04, half_life_months: 96, half_life_low: 70, half_life_high: 150, p_adjusted: 0.01, latest_share: 0.03, forecast_share12: 0.0275 })
  addCurve(db, { concept_id: 'cobol', state: 'insufficient-evidence' })

  // postings: flash travels with html5-canvas, jquery with typescript, perl with python (steady)
  for (const month of SCENARIO_MONTHS) {
    for (let i = 0; i < 3; i++) addDocument(db, { month, concepts: ['adobe-flash', 'html5-canvas'], title: 'Web Developer' })
    for (let i = 0; i < 4; i++) addDocument(db, { month, concepts: ['jquery', 'typescript', 'html'], title: 'Web Developer' })
    for (let i = 0; i < 2; i++) addDocument(db, { month, concepts: ['perl', 'python'], title: 'Data Analyst' })
    for (let i = 0; i < 6; i++) addDocument(db, { month, concepts: ['python'], title: 'Data Analyst' })
    for (let i = 0; i < 4; i++) addDocument(db, { month, concepts: ['typescript', 'html5-canvas'], title: 'Frontend Engineer' })
    addDocument(db, { month, concepts: ['html'], title: 'Web Developer' })
  }

  addPeople(db, 'Web Developer', ['w1', 'w2', 'w3', 'w4', 'w5', 'w6', 'w7', 'w8', 'w9', 'w10'])
  addPeople(db, 'Data Analyst', ['a1', 'a2', 'a3', 'a4', 'a5', 'a6'])
  addRole(db, 'Web Developer', 'typescript', 0.5)
  addRole(db, 'Web Developer', 'jquery', 0)
  addRole(db, 'Data Analyst', 'python', 0)
  addRole(db, 'Data Analyst', 'prompt-engineering', 0.5)
  addCoverage(db, { skill_id: 'typescript', role: 'Web Developer', headcount: 10, assessed: 8, expected_meeting: 2, required_theta: 0.5 })
  addCoverage(db, { skill_id: 'jquery', role: 'Web Developer', headcount: 10, assessed: 10, expected_meeting: 9 })
  addCoverage(db, { skill_id: 'python', role: 'Data Analyst', headcount: 6, assessed: 6, expected_meeting: 5.5 })
  addCoverage(db, { skill_id: 'prompt-engineering', role: 'Data Analyst', headcount: 6, assessed: 2, expected_meeting: 0.2, required_theta: 0.5 })
  // web developers strong in jQuery; six of them below the TypeScript requirement, two unassessed in it
  for (const p of ['w1', 'w2', 'w3', 'w4', 'w5', 'w6', 'w7', 'w8', 'w9', 'w10']) addAbility(db, p, 'jquery', 1)
  for (const [p, t] of [['w1', -1], ['w2', -0.5], ['w3', 0], ['w4', 0.2], ['w5', 1], ['w6', 1.2], ['w7', -0.2], ['w8', 0.1]] as const) addAbility(db, p, 'typescript', t)

  addCourse(db, { course_id: 'c-flash', title: 'Animations in Flash', skills: ['Adobe Flash'], enrollments_12m: 12, enrollments_prev_12m: 40 })
  addCourse(db, { course_id: 'c-jquery', title: 'Interactive pages', skills: ['jquery', 'HTML'], enrollments_12m: 80, enrollments_prev_12m: 85 })
  addCourse(db, { course_id: 'c-python', title: 'Python basics', skills: ['python'], enrollments_12m: 200, enrollments_prev_12m: 180 })
  addCourse(db, { course_id: 'c-perl', title: 'Perl for reports', skills: ['Perl'], enrollments_12m: 5, enrollments_prev_12m: 9 })
  addCourse(db, { course_id: 'c-untagged', title: 'From jQuery to modern pages', skills: [], enrollments_12m: 30, enrollments_prev_12m: 30 })
  addCourse(db, { course_id: 'c-unknown', title: 'Mystery', skills: ['no-such-skill'], enrollments_12m: 1, enrollments_prev_12m: 1 })
}
