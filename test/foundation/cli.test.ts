import { spawn, spawnSync } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { main, type Io } from '../../src/cli.ts'
import { openDb } from '../../src/db/connection.ts'

async function tides(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = ''
  let err = ''
  const io: Io = { out: (t) => (out += t), err: (t) => (err += t), isTty: false }
  const code = await main(args, io)
  return { code, out, err }
}

function tmpDir(): string {
  return fs.mkdtempSync(path.join(os.tmpdir(), 'tides-cli-'))
}

describe('tides CLI', () => {
  it('prints help with every DESIGN.md command and exits 0', async () => {
    const r = await tides('--help')
    expect(r.code).toBe(0)
    for (const c of ['init', 'demo', 'import', 'run', 'serve', 'report', 'map']) expect(r.out).toContain(`  ${c} `)
  })

  it('gives every command its own --help', async () => {
    for (const c of ['init', 'demo', 'import', 'run', 'serve', 'report', 'map']) {
      const r = await tides(c, '--help')
      expect(r.code, c).toBe(0)
      expect(r.out).toContain(`usage: tides ${c}`)
    }
  })

  it('answers a usage error with one line and exit 2', async () => {
    expect(await tides()).toMatchObject({ code: 2 })
    const unknownGlobal = await tides('--frobnicate')
    expect(unknownGlobal.code).toBe(2)
    expect(unknownGlobal.err).toMatch(/unknown option '--frobnicate'/)
    expect((await tides('--db', 'x.db')).err).toMatch(/a command is required/)
    expect((await tides('frobnicate')).err).toMatch(/unknown command "frobnicate"/)
    const r = await tides('report', 'skills', '--colour')
    expect(r.code).toBe(2)
    expect(r.err).toMatch(/Unknown option '--colour'/)
    expect((await tides('run')).code).toBe(2)
    expect((await tides('run', 'teleport')).err).toMatch(/unknown stage "teleport"/)
    expect((await tides('import', 'gossip', 'x.csv')).err).toMatch(/import needs a kind/)
    expect((await tides('report', 'runs', '--limit', 'ten')).err).toMatch(/--limit needs a whole number/)
    const folder = tmpDir()
    expect(await tides('--db', path.join(folder, 't.db'), 'import', 'people', folder)).toMatchObject({ code: 1, err: expect.stringContaining(`${folder}: cannot read: a folder, not a file (EISDIR)`) })
    // arguments are checked before the database is opened: a usage error creates none
    for (const args of [['run', 'all', '--wait', 'soon'], ['demo', '--seed', 'x']]) {
      const db = path.join(folder, `${args[0]}.db`)
      expect(await tides('--db', db, ...args)).toMatchObject({ code: 2, err: expect.stringMatching(/needs a whole number/) })
      expect(fs.existsSync(db), args.join(' ')).toBe(false)
    }
    for (const port of ['99999', 'abc', '-1', '80.5']) {
      const db = path.join(folder, `serve-${port}.db`)
      expect(await tides('--db', db, 'serve', `--port=${port}`)).toMatchObject({ code: 2, err: expect.stringContaining(`--port needs a port number (0 to 65535), got "${port}"`) })
      expect(fs.existsSync(db), 'a usage error creates no database').toBe(false)
    }
    expect(await tides('report', 'needs', '--limit', '0')).toMatchObject({ code: 2, err: expect.stringMatching(/--limit needs a whole number of at least 1, got "0"/) })
  })

  it('refuses a file with a wrong header as a whole, without advising --skip-bad (which cannot help)', async () => {
    const dir = tmpDir()
    const db = path.join(dir, 't.db')
    const people = path.join(dir, 'people.csv')
    fs.writeFileSync(people, 'person_id,team\np1,north\n')
    const taxonomy = path.join(dir, 'tax.csv')
    fs.writeFileSync(taxonomy, 'id,label\nfoo,Foo\n')
    for (const [kind, file, column] of [['people', people, 'role'], ['taxonomy', taxonomy, 'prefLabel']] as const) {
      for (const extra of [[], ['--skip-bad']]) {
        const r = await tides('--db', db, 'import', kind, file, ...extra)
        expect(r.code, `${kind} ${extra.join(' ')}`).toBe(1)
        expect(r.err).toContain(`${file}:1: column ${column}`)
        expect(r.err).toContain(`nothing imported from a file that could not be read as ${kind}`)
        expect(r.err).not.toMatch(/--skip-bad/)
      }
    }
  })

  it('imports a CSV, refuses a bad one with file:line, and accepts the good rows with --skip-bad', async () => {
    const dir = tmpDir()
    const db = path.join(dir, 't.db')
    const good = path.join(dir, 'people.csv')
    fs.writeFileSync(good, 'person_id,role,team\np1,analyst,north\n')
    const bad = path.join(dir, 'bad.csv')
    fs.writeFileSync(bad, 'person_id,role,team\np2,analyst,north\n,engineer,south\n')
    expect(await tides('--db', db, 'import', 'people', good)).toMatchObject({ code: 0 })
    const refused = await tides('import', 'people', bad, '--db', db)
    expect(refused.code).toBe(1)
    expect(refused.err).toContain(`${bad}:3: column person_id: is empty`)
    expect(refused.err).toMatch(/nothing imported .* --skip-bad/)
    const skipped = await tides('import', 'people', bad, '--db', db, '--skip-bad', '--json')
    expect(skipped.code).toBe(0)
    expect(JSON.parse(skipped.out)[0]).toMatchObject({ imported: 1, skipped: 1 })
  })

  it('says so on stderr while it upgrades an older database, and only then; --json output stays clean', async () => {
    const dir = tmpDir()
    const file = path.join(dir, 'old.db')
    openDb(file, { upTo: 8 }).close()
    const first = await tides('report', 'runs', '--json', '--db', file)
    expect(first.code).toBe(0)
    expect(first.err).toMatch(new RegExp(`^database ${file.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}: upgrading from schema 8 to 9 \\(the map queue replaces documents.mapped_version\\); a large database can take a while`))
    expect(JSON.parse(first.out)).toEqual([])
    const again = await tides('report', 'runs', '--db', file)
    expect(again.err).not.toMatch(/upgrading/)
    // a new database is created at the current schema without a word; an old one hears of each step
    const told: { from: number; version: number }[] = []
    openDb(path.join(dir, 'new.db'), { onMigrate: (m) => told.push(m) }).close()
    expect(told).toEqual([])
    openDb(path.join(dir, 'older.db'), { upTo: 7 }).close()
    openDb(path.join(dir, 'older.db'), { onMigrate: (m) => told.push({ from: m.from, version: m.version }) }).close()
    expect(told).toEqual([{ from: 7, version: 8 }, { from: 8, version: 9 }, { from: 9, version: 10 }, { from: 10, version: 11 }, { from: 11, version: 12 }, { from: 12, version: 13 }, { from: 13, version: 14 }])
  })

  it('--json prints exactly one parseable JSON document on stdout', async () => {
    const dir = tmpDir()
    openDb(path.join(dir, 't.db')).close()
    const r = await tides('report', 'runs', '--json', '--db', path.join(dir, 't.db'))
    expect(r.code).toBe(0)
    expect(JSON.parse(r.out)).toEqual([])
  })

  it('refuses a report on a database that is not there (a mistyped --db), creating nothing', async () => {
    const dir = tmpDir()
    const missing = path.join(dir, 'typo', 'tides.db')
    const r = await tides('report', 'skills', '--db', missing)
    expect(r.code).toBe(1)
    expect(r.out).toBe('')
    expect(r.err).toBe(`tides report: no database at ${missing}: create one with \`tides init\` or \`tides demo\`, or give the right --db (or TIDES_DB)\n`)
    expect(fs.existsSync(path.join(dir, 'typo'))).toBe(false)
  })

  it('accepts the README form `npx tides -- --db X ...` through the bin script', () => {
    const dir = tmpDir()
    openDb(path.join(dir, 't.db')).close()
    // the bin script is what npx runs; npm hands over everything after its own `--`
    const r = spawnSync(process.execPath, [path.join(__dirname, '../../bin/tides.js'), '--', '--db', path.join(dir, 't.db'), 'report', 'runs', '--json'], {
      encoding: 'utf8',
    })
    expect(r.status, r.stderr).toBe(0)
    expect(JSON.parse(r.stdout)).toEqual([])
  })

  it('the bin script runs the CLI in one child and passes SIGTERM on: `tides serve` started through it stops', async () => {
    const dir = tmpDir()
    const bin = spawn(process.execPath, [path.join(__dirname, '../../bin/tides.js'), '--db', path.join(dir, 't.db'), 'serve', '--port', '0', '--no-schedules'], { stdio: ['ignore', 'pipe', 'pipe'] })
    let err = ''
    const url = await new Promise<string>((resolve, reject) => {
      bin.stderr.on('data', (chunk: Buffer) => {
        err += chunk.toString()
        const found = /dashboard: (http:\/\/\S+)/.exec(err)
        if (found) resolve(found[1]!)
      })
      bin.once('exit', () => reject(new Error(`bin exited before serving: ${err}`)))
    })
    expect((await fetch(url)).status).toBe(200)
    const exited = new Promise<number | null>((resolve) => bin.once('exit', (code) => resolve(code)))
    bin.kill('SIGTERM')
    expect(await exited).toBe(0)
    await expect(fetch(url)).rejects.toThrow()
  }, 60_000)

  it('reports a bad config file naming the key, exit 1', async () => {
    const dir = tmpDir()
    const cfg = path.join(dir, 'c.json')
    fs.writeFileSync(cfg, JSON.stringify({ curves: { q: 7 } }))
    const r = await tides('--config', cfg, 'report', 'runs')
    expect(r.code).toBe(1)
    expect(r.err).toMatch(/curves\.q/)
  })

  it('init writes a config with a token once, and never overwrites it', async () => {
    const dir = tmpDir()
    const cfg = path.join(dir, 'tides.config.json')
    const first = await tides('init', '--config', cfg, '--db', path.join(dir, 't.db'))
    expect(first.code).toBe(0)
    expect(first.out).toMatch(/dashboard token \(shown once/)
    const token = JSON.parse(fs.readFileSync(cfg, 'utf8')).server.token
    expect(token.length).toBeGreaterThanOrEqual(16)
    const second = await tides('init', '--config', cfg, '--db', path.join(dir, 't.db'))
    expect(second.out).not.toMatch(/token/)
    expect(JSON.parse(fs.readFileSync(cfg, 'utf8')).server.token).toBe(token)
  })
})
