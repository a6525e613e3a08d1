/**
 * @module init
 * `tides init`: writes a config file with a fresh dashboard token when none exists.
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import { DEFAULT_CONFIG_FILE } from './config.ts'

export interface InitResult {
  configFile: string
  createdConfig: boolean
  /** the generated token, printed once */
  token?: string
}

export function initProject(global: { config?: string }, force: boolean): InitResult {
  const configFile = global.config ?? DEFAULT_CONFIG_FILE
  if (fs.existsSync(configFile) && !force) return { configFile, createdConfig: false }
  const token = crypto.randomBytes(24).toString('base64url')
  const config = { server: { host: '127.0.0.1', port: 4780, token }, sources: [], webhooks: [] }
  fs.writeFileSync(configFile, JSON.stringify(config, null, 2) + '\n', { mode: 0o600 })
  return { configFile, createdConfig: true, token }
}
