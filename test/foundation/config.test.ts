import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { ConfigError, loadConfig, parseConfig } from '../../src/config.ts'

function writeConfig(content: string): string {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-cfg-'))
  const file = path.join(dir, 'tides.config.json')
  fs.writeFileSync(file, content)
  return file
}

describe('config', () => {
  it('defaults every setting from an empty object', () => {
    const c = parseConfig({})
    expect(c.curves.q).toBe(0.05)
    expect(c.ingest.dedupe.threshold).toBe(0.9)
    expect(c.ability.D).toBe(1)
    expect(c.ability.minGroupSize).toBe(5)
    expect(c.server.host).toBe('127.0.0.1')
    expect(c.sources).toEqual([])
  })

  it('names an unknown key with its dotted path', () => {
    expect(() => parseConfig({ curves: { qq: 0.1 } }, 'x.json')).toThrow(/x\.json: curves: unknown key "qq"/)
    expect(() => parseConfig({ colour: 'blue' }, 'x.json')).toThrow(/\(top level\): unknown key "colour"/)
  })

  it('names a bad value with its dotted path', () => {
    expect(() => parseConfig({ ingest: { dedupe: { threshold: 2 } } })).toThrow(/ingest\.dedupe\.threshold/)
    expect(() => parseConfig({ sources: [{ id: 'a', kind: 'carrier-pigeon', location: 'x' }] })).toThrow(/sources\.0\.kind/)
    expect(() => parseConfig({ server: { port: 'eighty' } })).toThrow(/server\.port/)
  })

  it('refuses duplicate source ids', () => {
    const s = { kind: 'jsonl', location: 'a.jsonl' }
    expect(() => parseConfig({ sources: [{ id: 'a', ...s }, { id: 'a', ...s }] })).toThrow(/sources\.1\.id: duplicate source id "a"/)
  })

  it('refuses an invalid cron expression on a source', () => {
    expect(() => parseConfig({ sources: [{ id: 'a', kind: 'jsonl', location: 'a.jsonl', schedule: 'every tuesday' }] })).toThrow(
      /sources\.0\.schedule: "every tuesday" is not a valid cron expression/,
    )
    expect(parseConfig({ sources: [{ id: 'a', kind: 'jsonl', location: 'a.jsonl', schedule: '*/15 * * * *' }] }).sources[0]!.schedule).toBe('*/15 * * * *')
  })

  it('reports unreadable JSON with the file name', () => {
    const file = writeConfig('{ "db": ')
    expect(() => loadConfig({ file, env: {} })).toThrow(ConfigError)
    expect(() => loadConfig({ file, env: {} })).toThrow(new RegExp(`${path.basename(file)}: not valid JSON`))
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-config-'))
    const broken = path.join(dir, 'broken.json')
    fs.writeFileSync(broken, '{\n  "curves": {\n    "q": 0.05,\n  }\n}\n')
    // the trailing comma: line 4, where the next property name was expected
    expect(() => loadConfig({ file: broken, env: {} })).toThrow(`${broken}:4: column 3: not valid JSON`)
    expect(() => loadConfig({ file: '/nonexistent/tides.json', env: {} })).toThrow(/cannot read config file: no such file or folder \(ENOENT\)/)
  })

  it('resolves the database path against the config folder; TIDES_DB and --db override it', () => {
    const file = writeConfig(JSON.stringify({ db: 'data/x.db' }))
    expect(loadConfig({ file, env: {} }).db).toBe(path.join(path.dirname(file), 'data/x.db'))
    expect(loadConfig({ file, env: { TIDES_DB: '/tmp/env.db' } }).db).toBe('/tmp/env.db')
    expect(loadConfig({ file, env: { TIDES_DB: '/tmp/env.db' }, db: '/tmp/flag.db' }).db).toBe('/tmp/flag.db')
  })

  it('takes the dashboard token from TIDES_TOKEN', () => {
    const file = writeConfig('{}')
    expect(loadConfig({ file, env: { TIDES_TOKEN: 'a'.repeat(20) } }).server.token).toBe('a'.repeat(20))
  })
})
