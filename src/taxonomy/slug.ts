/**
 * @module taxonomy/slug
 * Concept ids of the shipped taxonomy are kebab-case slugs of the prefLabel.
 */

/**
 * Turns a label into a kebab-case id: accents dropped, `+` → plus, `#` → sharp, `&` → and,
 * a leading `.` → dot, every other run of non-alphanumerics → `-`.
 * @example
 * slugify('C#') // => 'c-sharp'
 * slugify('C++') // => 'c-plus-plus'
 * slugify('.NET') // => 'dot-net'
 * slugify('Retrieval-augmented generation') // => 'retrieval-augmented-generation'
 */
export function slugify(label: string): string {
  let s = label.normalize('NFKD').replace(/\p{M}+/gu, '').toLowerCase()
  s = s.replace(/(^|\s)\./g, '$1dot ')
  s = s.replace(/\+/g, ' plus ').replace(/#/g, ' sharp ').replace(/&/g, ' and ')
  return s.replace(/[^a-z0-9]+/g, '-').replace(/^-+|-+$/g, '')
}

/** True when `id` is a kebab-case slug (lowercase ASCII letters and digits joined by single hyphens). */
export function isKebabCase(id: string): boolean {
  return /^[a-z0-9]+(?:-[a-z0-9]+)*$/.test(id)
}
