import { describe, expect, it } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { insertConcept } from '../../src/db/taxonomy.ts'
import { workforceCounts } from '../../src/db/workforce.ts'
import { importTableText } from '../../src/inputs/tables.ts'
import { formatProblem } from '../../src/util/csv.ts'

function fresh() {
  return openDb(':memory:')
}

describe('table imports: good rows land', () => {
  it('people, roles, items, responses, abilities, courses', () => {
    const db = fresh()
    expect(importTableText(db, 'people', 'person_id,role,team\np1,analyst,north\np2,engineer,\n', 'people.csv')).toMatchObject({ imported: 2, refused: false })
    expect(importTableText(db, 'roles', 'role,skill_id,required_theta\nanalyst,sql,0.5\n', 'roles.csv').imported).toBe(1)
    expect(importTableText(db, 'items', 'item_id,skill_id,a,b,c\ni1,sql,1.2,-0.5,\ni2,sql,1,0.3,0.2\ni3,sql,,,\n', 'items.csv').imported).toBe(3)
    expect(importTableText(db, 'responses', 'person_id,item_id,response,taken_at\np1,i1,1,2026-01-05\np1,i2,0,2026-01-05T10:00:00Z\n', 'r.csv').imported).toBe(2)
    expect(importTableText(db, 'abilities', 'person_id,skill_id,theta,se,assessed_at\np1,python,0.4,0.3,2025-06-01\n', 'a.csv').imported).toBe(1)
    const courses = 'course_id,title,skills,last_reviewed,enrollments_12m,owner\nc1,"SQL, from zero",sql|python,2025-01-01,120,Ada Quill\nc2,Untitled talk,,,,\n'
    expect(importTableText(db, 'courses', courses, 'courses.csv').imported).toBe(2)
    expect(workforceCounts(db)).toEqual({ people: 2, roles: 1, items: 3, responses: 2, abilities: 1, courses: 2 })
    expect(db.prepare("SELECT skill_ref FROM course_skills WHERE course_id = 'c1' ORDER BY skill_ref").all()).toEqual([{ skill_ref: 'python' }, { skill_ref: 'sql' }])
    const item = db.prepare("SELECT a, b, c FROM items WHERE item_id = 'i1'").get()
    expect(item).toEqual({ a: 1.2, b: -0.5, c: null })
  })

  it('a re-import updates rows instead of duplicating them', () => {
    const db = fresh()
    importTableText(db, 'people', 'person_id,role,team\np1,analyst,north\n', 'a.csv')
    importTableText(db, 'people', 'person_id,role,team\np1,lead,south\n', 'b.csv')
    expect(db.prepare('SELECT * FROM people').all()).toEqual([{ person_id: 'p1', role: 'lead', team: 'south' }])
  })

  it('an older imported ability does not overwrite a newer one', () => {
    const db = fresh()
    importTableText(db, 'abilities', 'person_id,skill_id,theta,se,assessed_at\np1,sql,1.0,0.3,2026-05-01\n', 'new.csv')
    importTableText(db, 'abilities', 'person_id,skill_id,theta,se,assessed_at\np1,sql,-1.0,0.3,2024-05-01\n', 'old.csv')
    expect(db.prepare('SELECT theta FROM abilities').get()).toEqual({ theta: 1.0 })
  })
})

describe('table imports: bad rows are reported with file, line and column', () => {
  const cases: [string, Parameters<typeof importTableText>[1], string, RegExp][] = [
    ['a number that is not a number', 'roles', 'role,skill_id,required_theta\nanalyst,sql,0.5\nanalyst,python,high\n', /roles\.csv:3: column required_theta: "high" is not a number/],
    ['a response that is not 0 or 1', 'responses', 'person_id,item_id,response,taken_at\np1,i1,2,2026-01-01\n', /r\.csv:2: column response: 2 is above the maximum 1/],
    ['a date that is not a calendar date', 'abilities', 'person_id,skill_id,theta,se,assessed_at\np1,sql,0,0.3,2026-02-30\n', /a\.csv:2: column assessed_at: "2026-02-30" is not a calendar date/],
    ['a negative standard error', 'abilities', 'person_id,skill_id,theta,se,assessed_at\np1,sql,0,-1,2026-02-03\n', /column se: -1 is below the minimum/],
    ['an empty required field', 'people', 'person_id,role,team\n,analyst,north\n', /p\.csv:2: column person_id: is empty/],
    ['a row with too many fields', 'people', 'person_id,role,team\np1,analyst,north,extra\n', /p\.csv:2: expected 3 fields, found 4/],
    ['a guessing parameter of 1', 'items', 'item_id,skill_id,a,b,c\ni1,sql,1,0,1\n', /column c: 1 is above the maximum 0\.99/],
    ['an unknown item', 'responses', 'person_id,item_id,response,taken_at\np1,ghost,1,2026-01-01\n', /column item_id: unknown item "ghost"/],
  ]
  for (const [what, kind, text, pattern] of cases) {
    it(what, () => {
      const db = fresh()
      const file = kind === 'roles' ? 'roles.csv' : kind === 'responses' ? 'r.csv' : kind === 'abilities' ? 'a.csv' : 'p.csv'
      const r = importTableText(db, kind, text, file)
      expect(r.refused).toBe(true)
      expect(r.imported).toBe(0)
      expect(r.problems.map(formatProblem).join('\n')).toMatch(pattern)
    })
  }

  it('a file with bad rows imports nothing, unless --skip-bad: then the good rows land and the bad are counted', () => {
    const text = 'person_id,role,team\np1,analyst,north\n,analyst,north\np3,engineer,south\n'
    const db = fresh()
    expect(importTableText(db, 'people', text, 'p.csv')).toMatchObject({ refused: true, imported: 0 })
    expect(db.prepare('SELECT COUNT(*) AS n FROM people').get()).toEqual({ n: 0 })
    const r = importTableText(db, 'people', text, 'p.csv', { skipBad: true })
    expect(r).toMatchObject({ refused: false, imported: 2, skipped: 1, read: 3 })
    expect(db.prepare('SELECT COUNT(*) AS n FROM people').get()).toEqual({ n: 2 })
  })

  it('a missing column stops the file and names the column', () => {
    const r = importTableText(fresh(), 'items', 'item_id,skill_id,a,b\ni1,sql,1,0\n', 'items.csv', { skipBad: true })
    expect(r.refused).toBe(true)
    expect(formatProblem(r.problems[0]!)).toMatch(/items\.csv:1: column c: missing required column/)
  })

  it('an unclosed quote, invalid UTF-8 and an empty file are refused with their line', () => {
    expect(formatProblem(importTableText(fresh(), 'people', 'person_id,role,team\n"p1,analyst,north\n', 'q.csv').problems[0]!)).toMatch(/q\.csv:\d+: not valid CSV: Quote Not Closed/)
    const bad = Buffer.concat([Buffer.from('person_id,role,team\np1,an'), Buffer.from([0xff, 0xfe]), Buffer.from('alyst,north\n')]).toString('utf8')
    expect(formatProblem(importTableText(fresh(), 'people', bad, 'u.csv').problems[0]!)).toBe('u.csv:2: not valid UTF-8 text')
    expect(formatProblem(importTableText(fresh(), 'people', '', 'e.csv').problems[0]!)).toMatch(/e\.csv:1: empty file/)
  })

  it('a multi-line quoted field is reported on the line where its row starts', () => {
    const text = 'course_id,title,skills,last_reviewed,enrollments_12m,owner\nc1,"two\nlines",sql,2025-01-01,10,x\nc2,ok,sql,2025-13-01,10,x\n'
    const r = importTableText(fresh(), 'courses', text, 'c.csv')
    expect(r.problems.map(formatProblem)).toEqual(['c.csv:4: column last_reviewed: "2025-13-01" is not a calendar date'])
  })

  it('formula-injection cells are stored as text, not interpreted', () => {
    const db = fresh()
    importTableText(db, 'people', 'person_id,role,team\np1,"=cmd|\' /C calc\'!A0",north\n', 'p.csv')
    expect(db.prepare('SELECT role FROM people').get()).toEqual({ role: "=cmd|' /C calc'!A0" })
  })
})

describe('table imports: warnings reject nothing', () => {
  it('an unknown column is ignored with a note on line 1', () => {
    const r = importTableText(fresh(), 'people', 'person_id,role,team,shoe_size\np1,analyst,north,44\n', 'p.csv')
    expect(r).toMatchObject({ refused: false, imported: 1 })
    expect(formatProblem(r.problems[0]!)).toBe('p.csv:1: column shoe_size: unknown column(s) ignored')
  })

  it('names of skills the taxonomy lacks, and of people not imported, are noted once per column; the rows are kept', () => {
    const db = fresh()
    const notes = (r: ReturnType<typeof importTableText>) => r.problems.map(formatProblem)
    // nothing to check against yet: an empty taxonomy and no people
    expect(importTableText(db, 'items', 'item_id,skill_id,a,b,c\ni0,SQL,1,0,0\n', 'i.csv').problems).toEqual([])
    expect(importTableText(db, 'responses', 'person_id,item_id,response,taken_at\nghost,i0,1,2026-01-01\n', 'r.csv').problems).toEqual([])
    for (const id of ['sql', 'python']) insertConcept(db, { id, prefLabel: id, altLabels: [], hiddenLabels: [], broader: [], type: 'hard' }, 'import', { caseSensitive: () => false })
    importTableText(db, 'people', 'person_id,role,team\np1,analyst,north\n', 'p.csv')
    const items = importTableText(db, 'items', 'item_id,skill_id,a,b,c\ni1,sql,1,0,0\ni2,SQL,1,0,0\ni3,SQL,1,0,0\ni4,Python,1,0,0\n', 'i.csv')
    expect(items).toMatchObject({ refused: false, imported: 4 })
    expect(notes(items)).toEqual(['i.csv:3: column skill_id: 3 rows name 2 skills not in the taxonomy (first "SQL"); the rows are kept, and count toward a skill once the taxonomy has its id'])
    const responses = importTableText(db, 'responses', 'person_id,item_id,response,taken_at\np1,i1,1,2026-01-01\np2,i1,0,2026-01-01\n', 'r.csv')
    expect(responses).toMatchObject({ refused: false, imported: 2 })
    expect(notes(responses)).toEqual(['r.csv:3: column person_id: 1 row names 1 person not in the people table (first "p2"); the rows are kept, and count in a role once the person is imported'])
    const abilities = importTableText(db, 'abilities', 'person_id,skill_id,theta,se,assessed_at\np1,sql,0,0.3,2026-01-01\np3,Sql,0,0.3,2026-01-01\n', 'a.csv')
    expect(notes(abilities).map((n) => n.split(':').slice(0, 3).join(':'))).toEqual(['a.csv:3: column person_id', 'a.csv:3: column skill_id'])
    // a course's skills may be labels (the plan resolves them): not noted
    expect(importTableText(db, 'courses', 'course_id,title,skills,last_reviewed,enrollments_12m,owner\nc1,SQL,SQL|Python,,,\n', 'c.csv').problems).toEqual([])
    // every name known: no note
    expect(importTableText(db, 'roles', 'role,skill_id,required_theta\nanalyst,python,0\n', 'roles.csv').problems).toEqual([])
  })
})
