/**
 * @module demo/text
 * Sentence templates for the demo's job postings and how a posting's parts are rendered as plain
 * text or HTML. The fixed wording here must not contain any label of a planted skill (see
 * test/demo/text.test.ts); skills enter the text only through the `{L}` and `{S}` slots.
 */
import type { Rng } from './prng.ts'

export const INTROS: readonly string[] = [
  '{E} is looking for {A} {T} to join the team in {P}.',
  'Join {E} as {A} {T} and help us build services people rely on.',
  'We are {E}, and we are hiring {A} {T} for our {P} office.',
  '{E} is growing and needs {A} {T}.',
  'As {A} {T} at {E}, you will work with a friendly team that likes to share what it knows.',
  'Our {P} team at {E} is hiring: {T}.',
  '{E} has an opening for {A} {T}, based in {P}.',
  'Come and work with us at {E}: we need {A} {T} in {P}.',
]

export const MUST: readonly string[] = [
  'Experience with {L}.',
  'Hands-on experience with {L}.',
  'You have worked with {L} in production.',
  'Solid knowledge of {L}.',
  'Practical skills in {L}.',
  'A track record of delivering with {L}.',
  'Good working knowledge of {L}.',
  'Confident using {L}.',
]

export const NICE: readonly string[] = [
  'Nice to have: {L}.',
  'Familiarity with {L} is a plus.',
  'Bonus points for {L}.',
  'Exposure to {L} would help.',
  'Any experience of {L} is welcome.',
]

export const SOFT: readonly string[] = [
  'We value {S}.',
  'You bring {S}.',
  'The role calls for {S}.',
  'You will need {S}.',
  'We look for {S} in everyone we hire.',
]

export const CLOSINGS: readonly string[] = [
  'We offer 30 days of leave, a matched pension and a personal learning budget.',
  'Hybrid working with two office days a week and hours that fit around family life.',
  'Apply with your CV and a short note about why the role interests you.',
  'We welcome applications from people of every background and will make adjustments for interviews.',
  'Interviews start with a video call, then half a day with the team.',
  'Relocation support is available for the right person.',
  'Part-time and job-share applications are welcome.',
  'You will get a laptop of your choice and a budget for your home office.',
]

/** Words before a title; '' most often. */
export const SENIORITY: readonly (readonly [string, number])[] = [
  ['', 0.55], ['Senior ', 0.22], ['Junior ', 0.08], ['Lead ', 0.06], ['Principal ', 0.04], ['Graduate ', 0.05],
]

export type WorkMode = 'onsite' | 'hybrid' | 'remote'

/** The pieces of one posting's body; rendered as plain text or HTML by the writers. */
export interface BodyParts {
  /** 0 = sections with bullets, 1 = prose, 2 = short with a requirements line */
  layout: 0 | 1 | 2
  intro: string
  duties: string[]
  must: string[]
  nice: string | null
  soft: string | null
  salary: string
  closing: string
}

/** "a" or "an" before a title (by its first letter; good enough for the invented titles). */
export function article(word: string): string {
  return /^[AEIOU]/.test(word) && !/^(Uni|Use)/.test(word) ? 'an' : 'a'
}

/** Joins phrases as English: "A", "A and B", "A, B and C" (sometimes with a serial comma). */
export function joinList(rng: Rng, items: readonly string[]): string {
  if (items.length <= 1) return items[0] ?? ''
  if (items.length === 2) return `${items[0]} and ${items[1]}`
  const head = items.slice(0, -1).join(', ')
  return `${head}${rng.chance(0.3) ? ',' : ''} and ${items[items.length - 1]}`
}

const compiled = new Map<string, string[]>()

/**
 * Fills `{X}` slots of a template. Templates are split once and cached: the generator fills hundreds
 * of thousands of them, and a replace with a callback per call dominated its profile.
 * @example fill('Experience with {L}.', { L: 'Rust' }) // => 'Experience with Rust.'
 */
export function fill(template: string, values: Record<string, string>): string {
  let parts = compiled.get(template)
  if (!parts) {
    parts = template.split(/\{(\w)\}/)
    compiled.set(template, parts)
  }
  // even indexes are literal text, odd ones slot names
  let out = parts[0]!
  for (let i = 1; i < parts.length; i += 2) out += (values[parts[i]!] ?? '') + parts[i + 1]!
  return out
}

/** A yearly salary range in whole thousands, as "48,000 to 56,000". */
export function salaryText(low: number, high: number): string {
  const fmt = (n: number) => `${Math.floor(n / 1000)},${String(n % 1000).padStart(3, '0')}`
  return `Salary: ${fmt(low)} to ${fmt(high)} a year, depending on experience.`
}

export function renderPlain(p: BodyParts): string {
  const bring = [...p.must, ...(p.nice ? [p.nice] : []), ...(p.soft ? [p.soft] : [])]
  switch (p.layout) {
    case 0:
      return `${p.intro}\n\nWhat you will do:\n${p.duties.map((d) => `- ${d}`).join('\n')}\n\nWhat you bring:\n${bring.map((b) => `- ${b}`).join('\n')}\n\n${p.salary} ${p.closing}`
    case 1:
      return [p.intro, ...p.duties, ...bring, p.salary, p.closing].join(' ')
    case 2:
      return `${p.intro} ${p.duties[0] ?? ''}\n\nRequirements: ${bring.join(' ')}\n\n${p.salary} ${p.closing}`
  }
}

const HTML_ESCAPES: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' }

/** Escapes text for HTML and XML content and attributes. */
export function escapeXml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => HTML_ESCAPES[c]!)
}

export function renderHtml(p: BodyParts): string {
  const e = escapeXml
  const bring = [...p.must, ...(p.nice ? [p.nice] : []), ...(p.soft ? [p.soft] : [])]
  if (p.layout === 0) {
    return `<p>${e(p.intro)}</p><h3>What you will do</h3><ul>${p.duties.map((d) => `<li>${e(d)}</li>`).join('')}</ul><h3>What you bring</h3><ul>${bring.map((b) => `<li>${e(b)}</li>`).join('')}</ul><p>${e(p.salary)} ${e(p.closing)}</p>`
  }
  // the same words as renderPlain, so a posting published as HTML on one board and as plain text on another is an exact repost
  if (p.layout === 2) return `<p>${e(p.intro)} ${e(p.duties[0] ?? '')}</p><p>Requirements: ${e(bring.join(' '))}</p><p>${e(p.salary)} ${e(p.closing)}</p>`
  return `<p>${e([p.intro, ...p.duties].join(' '))}</p><p>${e(bring.join(' '))}</p><p>${e(p.salary)} ${e(p.closing)}</p>`
}
