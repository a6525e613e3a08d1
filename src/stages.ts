/**
 * @module stages
 * The registry of built stages, in pipeline order. Each stage module exports one `Stage`; add yours
 * here (one import line and one array entry).
 */
import type { Stage } from './stage.ts'
import { abilityStage } from './ability/stage.ts'
import { fitStage } from './curves/stage.ts'
import { ingestStage } from './ingest/stage.ts'
import { planStage } from './plan/stage.ts'
import { mapStage } from './taxonomy/stage.ts'

export const STAGES: readonly Stage[] = [ingestStage, mapStage, fitStage, abilityStage, planStage]

export function findStage(name: string): Stage | undefined {
  return STAGES.find((s) => s.name === name)
}
