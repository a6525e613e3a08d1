/**
 * @module db/migrations
 * Numbered schema migrations. The database records the last applied number in `PRAGMA user_version`;
 * `migrate()` in connection.ts applies the missing ones in order, each in its own transaction.
 * Never edit a migration that has shipped: add a new one at the end.
 *
 * Skill ids in people/roles/items/abilities/courses are not foreign keys to `concepts`: organisations
 * import their assessment data and their taxonomy in any order; the stages report unknown ids instead.
 */

export interface Migration {
  version: number
  name: string
  sql: string
}

const V1_CORE = `
CREATE TABLE settings (
  key TEXT PRIMARY KEY,
  value TEXT NOT NULL
);

CREATE TABLE sources (
  id TEXT PRIMARY KEY,
  kind TEXT NOT NULL CHECK (kind IN ('feed','jsonl','requests','folder','import')),
  location TEXT NOT NULL,
  schedule TEXT,
  options_json TEXT NOT NULL DEFAULT '{}',
  etag TEXT,
  last_modified TEXT,
  cursor TEXT,
  created_at TEXT NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now'))
);

-- one row per posting or internal request; reposts point at their original through duplicate_of
CREATE TABLE documents (
  id INTEGER PRIMARY KEY,
  source_id TEXT NOT NULL REFERENCES sources(id),
  external_id TEXT NOT NULL,
  kind TEXT NOT NULL CHECK (kind IN ('posting','request')),
  title TEXT NOT NULL DEFAULT '',
  body TEXT NOT NULL DEFAULT '',
  posted_at TEXT NOT NULL,
  month TEXT NOT NULL,
  date_estimated INTEGER NOT NULL DEFAULT 0,
  text_hash TEXT NOT NULL,
  duplicate_of INTEGER REFERENCES documents(id),
  dup_similarity REAL,
  occupation TEXT,
  organisation TEXT,
  location TEXT,
  channel TEXT,
  team TEXT,
  skills_json TEXT,
  -- MinHash signature of the word shingles (uint32 little-endian), postings only
  signature BLOB,
  ingested_at TEXT NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')),
  mapped_version INTEGER,
  UNIQUE (source_id, external_id)
);
CREATE INDEX documents_hash ON documents(text_hash);
CREATE INDEX documents_month ON documents(kind, month);
CREATE INDEX documents_unmapped ON documents(mapped_version);

-- MinHash LSH band keys for near-duplicate detection: key = band * 2^32 + 32-bit hash of the band's
-- rows, so one index lookup with key IN (...) finds every candidate. No foreign key: the check would
-- double the cost of the ten band rows written per posting, and a band row whose document is gone
-- only yields a candidate that is not found (documents are never deleted by the program).
CREATE TABLE document_bands (
  key INTEGER NOT NULL,
  document_id INTEGER NOT NULL,
  PRIMARY KEY (key, document_id)
) WITHOUT ROWID;

CREATE TABLE concepts (
  id TEXT PRIMARY KEY,
  pref_label TEXT NOT NULL,
  type TEXT NOT NULL CHECK (type IN ('hard','soft')),
  rule_json TEXT,
  origin TEXT NOT NULL DEFAULT 'import',
  created_at TEXT NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now'))
);

CREATE TABLE labels (
  concept_id TEXT NOT NULL REFERENCES concepts(id) ON DELETE CASCADE,
  label TEXT NOT NULL,
  kind TEXT NOT NULL CHECK (kind IN ('pref','alt','hidden')),
  case_sensitive INTEGER NOT NULL DEFAULT 0,
  PRIMARY KEY (concept_id, label, kind)
);
CREATE INDEX labels_label ON labels(label);

CREATE TABLE concept_broader (
  concept_id TEXT NOT NULL REFERENCES concepts(id) ON DELETE CASCADE,
  broader_id TEXT NOT NULL REFERENCES concepts(id) ON DELETE CASCADE,
  PRIMARY KEY (concept_id, broader_id)
);

-- a document mentions a concept or not; via = 'text' | 'skills' (schema.org skills field) | 'rollup'
CREATE TABLE mentions (
  document_id INTEGER NOT NULL REFERENCES documents(id) ON DELETE CASCADE,
  concept_id TEXT NOT NULL REFERENCES concepts(id) ON DELETE CASCADE,
  count INTEGER NOT NULL,
  first_offset INTEGER,
  via TEXT NOT NULL,
  PRIMARY KEY (document_id, concept_id)
);
CREATE INDEX mentions_concept ON mentions(concept_id);

CREATE TABLE candidate_terms (
  term TEXT PRIMARY KEY,
  score REAL NOT NULL,
  recent_df INTEGER NOT NULL,
  earlier_df INTEGER NOT NULL,
  trend_json TEXT NOT NULL DEFAULT '[]',
  examples_json TEXT NOT NULL DEFAULT '[]',
  status TEXT NOT NULL DEFAULT 'open' CHECK (status IN ('open','accepted','dismissed')),
  decision_json TEXT,
  updated_at TEXT NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now'))
);

-- monthly demand per skill: n documents mentioning it of total documents of that series
CREATE TABLE demand (
  concept_id TEXT NOT NULL,
  series TEXT NOT NULL CHECK (series IN ('external','internal')),
  month TEXT NOT NULL,
  n INTEGER NOT NULL,
  total INTEGER NOT NULL,
  PRIMARY KEY (concept_id, series, month)
);

CREATE TABLE curves (
  concept_id TEXT PRIMARY KEY,
  state TEXT NOT NULL,
  annual_growth REAL,
  growth_low REAL,
  growth_high REAL,
  half_life_months REAL,
  half_life_low REAL,
  half_life_high REAL,
  p_value REAL,
  p_adjusted REAL,
  latest_share REAL,
  forecast_share12 REAL,
  forecast_method TEXT,
  change_month TEXT,
  emerged_month TEXT,
  details_json TEXT NOT NULL DEFAULT '{}',
  fitted_at TEXT NOT NULL
);

CREATE TABLE people (
  person_id TEXT PRIMARY KEY,
  role TEXT NOT NULL,
  team TEXT NOT NULL DEFAULT ''
);
CREATE INDEX people_role ON people(role);

CREATE TABLE roles (
  role TEXT NOT NULL,
  skill_id TEXT NOT NULL,
  required_theta REAL NOT NULL,
  PRIMARY KEY (role, skill_id)
);

CREATE TABLE items (
  item_id TEXT PRIMARY KEY,
  skill_id TEXT NOT NULL,
  a REAL,
  b REAL,
  c REAL,
  origin TEXT NOT NULL DEFAULT 'import',
  fit_json TEXT
);
CREATE INDEX items_skill ON items(skill_id);

CREATE TABLE responses (
  person_id TEXT NOT NULL,
  item_id TEXT NOT NULL REFERENCES items(item_id),
  response INTEGER NOT NULL CHECK (response IN (0,1)),
  taken_at TEXT NOT NULL,
  PRIMARY KEY (person_id, item_id, taken_at)
);

-- origin 'import' = estimates made elsewhere; 'estimate' = computed here from responses
CREATE TABLE abilities (
  person_id TEXT NOT NULL,
  skill_id TEXT NOT NULL,
  origin TEXT NOT NULL CHECK (origin IN ('import','estimate')),
  theta REAL NOT NULL,
  se REAL NOT NULL,
  assessed_at TEXT NOT NULL,
  method TEXT,
  note TEXT,
  PRIMARY KEY (person_id, skill_id, origin)
);

CREATE TABLE coverage (
  skill_id TEXT NOT NULL,
  role TEXT NOT NULL,
  required_theta REAL NOT NULL,
  headcount INTEGER NOT NULL,
  assessed INTEGER NOT NULL,
  unknown INTEGER NOT NULL,
  stale INTEGER NOT NULL DEFAULT 0,
  expected_meeting REAL NOT NULL,
  coverage REAL,
  expected_gap REAL NOT NULL,
  gap_low REAL NOT NULL,
  gap_high REAL NOT NULL,
  updated_at TEXT NOT NULL,
  PRIMARY KEY (skill_id, role)
);

CREATE TABLE courses (
  course_id TEXT PRIMARY KEY,
  title TEXT NOT NULL,
  last_reviewed TEXT,
  enrollments_12m INTEGER,
  enrollments_prev_12m INTEGER,
  owner TEXT NOT NULL DEFAULT ''
);

-- inferred = 1 when the skill was mapped from the title because the course had no tags
CREATE TABLE course_skills (
  course_id TEXT NOT NULL REFERENCES courses(course_id) ON DELETE CASCADE,
  skill_ref TEXT NOT NULL,
  skill_id TEXT,
  inferred INTEGER NOT NULL DEFAULT 0,
  PRIMARY KEY (course_id, skill_ref)
);

-- plan outputs: needs ranking, course flags, pathways, reskilling forecast (one row per key)
CREATE TABLE plan_outputs (
  kind TEXT NOT NULL,
  key TEXT NOT NULL,
  rank INTEGER,
  score REAL,
  payload_json TEXT NOT NULL,
  updated_at TEXT NOT NULL,
  PRIMARY KEY (kind, key)
);

CREATE TABLE course_flag_notes (
  id INTEGER PRIMARY KEY,
  course_id TEXT NOT NULL,
  action TEXT NOT NULL,
  flag TEXT,
  note TEXT NOT NULL DEFAULT '',
  actor TEXT NOT NULL DEFAULT '',
  until TEXT,
  at TEXT NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now'))
);

CREATE TABLE job_runs (
  id INTEGER PRIMARY KEY,
  stage TEXT NOT NULL,
  source_id TEXT,
  trigger TEXT NOT NULL DEFAULT 'manual',
  started_at TEXT NOT NULL,
  ended_at TEXT,
  status TEXT NOT NULL DEFAULT 'running' CHECK (status IN ('running','ok','failed','partial')),
  read INTEGER NOT NULL DEFAULT 0,
  new INTEGER NOT NULL DEFAULT 0,
  duplicate INTEGER NOT NULL DEFAULT 0,
  rejected INTEGER NOT NULL DEFAULT 0,
  error TEXT,
  details_json TEXT NOT NULL DEFAULT '{}'
);
CREATE INDEX job_runs_stage ON job_runs(stage, started_at);

-- the outbox: written in the same transaction as the work it announces, delivered after commit
CREATE TABLE events (
  id INTEGER PRIMARY KEY,
  type TEXT NOT NULL,
  payload_json TEXT NOT NULL,
  created_at TEXT NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now'))
);
CREATE INDEX events_type ON events(type, id);

-- per consumer (in-process stage subscription or webhook endpoint): how far it has got
CREATE TABLE event_cursors (
  consumer TEXT PRIMARY KEY,
  last_event_id INTEGER NOT NULL DEFAULT 0
);

CREATE TABLE webhook_deliveries (
  event_id INTEGER NOT NULL REFERENCES events(id),
  endpoint TEXT NOT NULL,
  status TEXT NOT NULL CHECK (status IN ('pending','delivered','failed')),
  attempts INTEGER NOT NULL DEFAULT 0,
  next_attempt_at TEXT,
  last_error TEXT,
  delivered_at TEXT,
  PRIMARY KEY (event_id, endpoint)
);

-- advisory lock with a lease, so that two pipeline runs never overlap and a dead holder's lock expires
CREATE TABLE locks (
  name TEXT PRIMARY KEY,
  holder TEXT NOT NULL,
  pid INTEGER NOT NULL,
  expires_at INTEGER NOT NULL
);
`

/**
 * Migration 2 is kept apart from 1 on purpose: it is the first real upgrade step and the migration
 * tests upgrade a version-1 database through it in place.
 */
const V2_RUN_INDEXES = `
CREATE INDEX documents_duplicate ON documents(duplicate_of);
CREATE INDEX curves_state ON curves(state);
CREATE INDEX plan_outputs_rank ON plan_outputs(kind, rank);
`

/**
 * Migration 3: demand kept as running aggregates, and leaner mention storage.
 *
 * - `demand_counts` (n documents mentioning a concept, per series and month) and `demand_totals`
 *   (N documents per series and month) hold exactly what the fit stage used to recompute from
 *   mentions x documents on every run: mapped original documents only, a document counted once per
 *   concept after roll-up. The map stage (and every writer that changes a counted document) updates
 *   them in the transaction that changes the mentions; db/curves.ts `rebuildDemandCounts` is the
 *   full recomputation (reference and repair). Both are filled here from the stored mentions.
 * - `mentions` and `demand` become WITHOUT ROWID tables clustered on their primary keys: the rowid
 *   tables kept the same rows twice (table + primary-key index).
 */
const V3_DEMAND_AGGREGATES = `
CREATE TABLE demand_counts (
  concept_id TEXT NOT NULL,
  series TEXT NOT NULL CHECK (series IN ('external','internal')),
  month TEXT NOT NULL,
  n INTEGER NOT NULL,
  PRIMARY KEY (concept_id, series, month)
) WITHOUT ROWID;

CREATE TABLE demand_totals (
  series TEXT NOT NULL CHECK (series IN ('external','internal')),
  month TEXT NOT NULL,
  total INTEGER NOT NULL,
  PRIMARY KEY (series, month)
) WITHOUT ROWID;

CREATE TABLE mentions_v3 (
  document_id INTEGER NOT NULL REFERENCES documents(id) ON DELETE CASCADE,
  concept_id TEXT NOT NULL REFERENCES concepts(id) ON DELETE CASCADE,
  count INTEGER NOT NULL,
  first_offset INTEGER,
  via TEXT NOT NULL,
  PRIMARY KEY (document_id, concept_id)
) WITHOUT ROWID;
INSERT INTO mentions_v3 (document_id, concept_id, count, first_offset, via)
  SELECT document_id, concept_id, count, first_offset, via FROM mentions ORDER BY document_id, concept_id;
DROP TABLE mentions;
ALTER TABLE mentions_v3 RENAME TO mentions;
CREATE INDEX mentions_concept ON mentions(concept_id);

CREATE TABLE demand_v3 (
  concept_id TEXT NOT NULL,
  series TEXT NOT NULL CHECK (series IN ('external','internal')),
  month TEXT NOT NULL,
  n INTEGER NOT NULL,
  total INTEGER NOT NULL,
  PRIMARY KEY (concept_id, series, month)
) WITHOUT ROWID;
INSERT INTO demand_v3 SELECT concept_id, series, month, n, total FROM demand ORDER BY concept_id, series, month;
DROP TABLE demand;
ALTER TABLE demand_v3 RENAME TO demand;

INSERT INTO demand_totals (series, month, total)
  SELECT CASE kind WHEN 'posting' THEN 'external' ELSE 'internal' END, month, COUNT(*) FROM documents
  WHERE duplicate_of IS NULL AND mapped_version IS NOT NULL AND kind IN ('posting','request')
  GROUP BY kind, month;
INSERT INTO demand_counts (concept_id, series, month, n)
  SELECT m.concept_id, CASE d.kind WHEN 'posting' THEN 'external' ELSE 'internal' END, d.month, COUNT(*)
  FROM mentions m JOIN documents d ON d.id = m.document_id
  WHERE d.duplicate_of IS NULL AND d.mapped_version IS NOT NULL AND d.kind IN ('posting','request')
  GROUP BY m.concept_id, d.kind, d.month;
`

/**
 * Migration 4: the per-fit copy of the monthly demand (`demand`, every month of every mentioned
 * skill, n and N on each row: about 1.2 million rows at 20,000 skills) goes. The dashboard reads the
 * running aggregates `demand_counts` and `demand_totals` the fit reads, which hold only the non-zero
 * counts (about a fifth of the rows) and are kept by the map stage anyway; the fit stage no longer
 * compares and rewrites a million rows on every run.
 */
const V4_DROP_DEMAND_COPY = `
DROP TABLE demand;
`

/**
 * Migration 5: the index of documents waiting to be mapped holds only those: unmapped originals (a
 * partial index), with the two columns of its condition, so that counting and paging them reads the
 * index alone (the map's queries name it with INDEXED BY: the planner would otherwise take the
 * duplicate_of index, where nearly every document sits under NULL). The index it replaces, on
 * mapped_version, held every document, mapped ones under their version and the reposts, which are
 * never mapped, under NULL: an incremental map of 10,000 new postings into the N = 1,000,000
 * benchmark database walked its older reposts and read each of their rows to see it was one
 * (0.74 s of reading the batches and 0.31 s of counting, of a 7.1 s profiled map), and every
 * mapped document moved its entry within the index.
 */
const V5_UNMAPPED_ORIGINALS = `
DROP INDEX documents_unmapped;
CREATE INDEX documents_unmapped ON documents(id, mapped_version, duplicate_of) WHERE mapped_version IS NULL AND duplicate_of IS NULL;
`

/**
 * Migration 6: a small second level of band rows, and the 8-bit sketches of the stored signatures.
 * - `document_bands_recent` takes the band rows of small runs: 100,000 random keys (an incremental
 *   run of 10,000 postings) inserted into the ten million rows of `document_bands` at a million
 *   postings touched nearly every page of it, and the commit and the WAL checkpoint wrote most of
 *   the table (2.6 s of a 7 s import). Its rows are merged into `document_bands` in one sorted pass
 *   once it holds more than a fraction of all band rows (src/db/bands.ts); lookups read both.
 * - `document_sketches` holds every signature's sketch (src/db/sketches.ts), so that the dedupe
 *   dismisses an older candidate without reading its row of the wide documents table. Triggers
 *   drop a sketch whose document is deleted or whose signature changes. The sketches of the stored
 *   signatures are computed by the SQL function `tides_sketch`, which openDb registers.
 */
const V6_BAND_LEVELS_AND_SKETCHES = `
CREATE TABLE document_bands_recent (
  key INTEGER NOT NULL,
  document_id INTEGER NOT NULL,
  PRIMARY KEY (key, document_id)
) WITHOUT ROWID;

CREATE TABLE document_sketches (
  id INTEGER PRIMARY KEY,
  sketch BLOB NOT NULL
);
INSERT INTO document_sketches (id, sketch) SELECT id, tides_sketch(signature) FROM documents WHERE signature IS NOT NULL ORDER BY id;

CREATE TRIGGER documents_sketch_deleted AFTER DELETE ON documents BEGIN
  DELETE FROM document_sketches WHERE id = OLD.id;
END;
CREATE TRIGGER documents_sketch_changed AFTER UPDATE OF signature ON documents BEGIN
  DELETE FROM document_sketches WHERE id = OLD.id;
END;
`

/**
 * Migration 7: `mention_lists`, each document's direct concepts (not its roll-ups) in one short
 * row of integer codes (`concept_codes`), clustered on (kind, month, document id): the plan's
 * adjacency reads a window of postings as a range of these rows instead of every mention row of
 * every document of the window (src/db/mention-lists.ts: the encoding and the writers that keep it,
 * in the transactions that change mentions). A deleted document's row goes by the trigger, as its
 * mentions go by the foreign key's cascade. Filled here from the stored mentions (the statements of
 * mention-lists.ts FILL_MENTION_LISTS): 14-33 s at a million postings (12-15 s CPU; 25.6 million
 * mention rows read, 950,000 rows written, 22 MB of codes).
 */
const V7_MENTION_LISTS = `
CREATE TABLE concept_codes (
  code INTEGER PRIMARY KEY,
  concept_id TEXT NOT NULL UNIQUE
);

CREATE TABLE mention_lists (
  kind TEXT NOT NULL,
  month TEXT NOT NULL,
  document_id INTEGER NOT NULL,
  codes BLOB NOT NULL,
  PRIMARY KEY (kind, month, document_id)
) WITHOUT ROWID;

CREATE TRIGGER documents_mention_list_deleted AFTER DELETE ON documents BEGIN
  DELETE FROM mention_lists WHERE kind = OLD.kind AND month = OLD.month AND document_id = OLD.id;
END;

INSERT OR IGNORE INTO concept_codes (concept_id) SELECT id FROM concepts ORDER BY id;
INSERT INTO mention_lists (kind, month, document_id, codes)
  SELECT d.kind, d.month, l.document_id, l.codes FROM (
    SELECT m.document_id, unhex(group_concat(CASE WHEN c.code < 128 THEN printf('%02X', c.code)
  WHEN c.code < 16384 THEN printf('%02X%02X', (c.code & 127) | 128, c.code >> 7)
  WHEN c.code < 2097152 THEN printf('%02X%02X%02X', (c.code & 127) | 128, ((c.code >> 7) & 127) | 128, c.code >> 14)
  ELSE printf('%02X%02X%02X%02X', (c.code & 127) | 128, ((c.code >> 7) & 127) | 128, ((c.code >> 14) & 127) | 128, c.code >> 21) END, '' ORDER BY m.concept_id)) AS codes
    FROM mentions m JOIN concept_codes c ON c.concept_id = m.concept_id
    WHERE m.via <> 'rollup' GROUP BY m.document_id) l
  JOIN documents d ON d.id = l.document_id
  ORDER BY d.kind, d.month, l.document_id;
`

/**
 * Migration 8: `matcher_cache`, the compiled matcher of the current taxonomy version (one row; see
 * taxonomy/matcher-cache.ts). Filled by the first run that needs the matcher.
 */
const V8_MATCHER_CACHE = `
CREATE TABLE matcher_cache (
  taxonomy_version INTEGER NOT NULL,
  code TEXT NOT NULL,
  data BLOB NOT NULL,
  PRIMARY KEY (taxonomy_version, code)
);
`

/**
 * Migration 9: the map's queue, `unmapped_documents`, instead of `documents.mapped_version`. A
 * document counts in the demand aggregates while it is an original and not queued. Marking a
 * document mapped used to rewrite its row of the wide documents table (about three documents to an
 * 8 KB page, with their texts): a bulk map of a million postings wrote the whole 2.3 GB table to
 * the WAL and again to the database (300,000 of those updates took 4.0 s wall against 0.96 s to
 * read the same rows); now it deletes one narrow row. A new original joins the queue where the
 * ingest stores it (DocumentStore.insertDocument: done by an AFTER INSERT trigger instead, an import
 * of 100,000 postings took 3.5 s longer, 8.5 -> 12.1 s, measured); triggers keep it through the rare
 * changes: a document that becomes a repost leaves it (reposts are never mapped), a repost that
 * becomes the original (its original deleted) joins it, a deleted document leaves it. The column
 * goes: SQLite rewrites the table once to drop it (26.6 s at a million postings).
 */
const V9_MAP_QUEUE = `
CREATE TABLE unmapped_documents (id INTEGER PRIMARY KEY);
INSERT INTO unmapped_documents (id)
  SELECT id FROM documents INDEXED BY documents_unmapped WHERE mapped_version IS NULL AND duplicate_of IS NULL ORDER BY id;
DROP INDEX documents_unmapped;
ALTER TABLE documents DROP COLUMN mapped_version;

CREATE TRIGGER documents_queue_repost AFTER UPDATE OF duplicate_of ON documents
  WHEN OLD.duplicate_of IS NULL AND NEW.duplicate_of IS NOT NULL BEGIN
  DELETE FROM unmapped_documents WHERE id = NEW.id;
END;
CREATE TRIGGER documents_queue_heir AFTER UPDATE OF duplicate_of ON documents
  WHEN OLD.duplicate_of IS NOT NULL AND NEW.duplicate_of IS NULL BEGIN
  INSERT OR IGNORE INTO unmapped_documents (id) VALUES (NEW.id);
END;
CREATE TRIGGER documents_queue_deleted AFTER DELETE ON documents BEGIN
  DELETE FROM unmapped_documents WHERE id = OLD.id;
END;
`

/**
 * Migration 10: a curve's month series (fitted curve, combined index, forecast bands) as one
 * binary column of float64 values instead of numbers in details_json (curves/stored-series.ts):
 * at a million postings the fit wrote 138 MB of details JSON per run. Older rows keep their series
 * in the JSON (series NULL) and read as before; the next fit rewrites every row.
 */
const V10_CURVE_SERIES = `ALTER TABLE curves ADD COLUMN series BLOB;`

/**
 * Migration 11: the index of curve states also holds the concept id, so that the fit's read of the
 * stored states (db/curves.ts readCurveStates) is a scan of that index and not of the curve rows
 * with their details and series: 80–135 ms → 17–29 ms for 20,000 curves at a million postings
 * (measured on a copy of the benchmark's table). Lookups by state use it as before.
 */
const V11_CURVE_STATES_INDEX = `
DROP INDEX curves_state;
CREATE INDEX curves_state ON curves(state, concept_id);
`

/**
 * Migration 12: what the ability stage needs to skip a run whose inputs did not change.
 * `change_counters` holds one counter, `ability_inputs`, moved on by every write to what the stage
 * reads: people, roles, items, responses and the imported abilities (those of origin 'estimate' are
 * the stage's own output). The import storage functions (db/workforce.ts), the only writers of
 * those rows, bump it once per call inside the import's transaction: AFTER INSERT/UPDATE triggers
 * run per row, and importing the demo's 777,473 responses for 20,000 people took 20.0–20.4 s with
 * them against 9.6–9.7 s without (measured twice each). Nothing in the program deletes those rows,
 * so DELETE triggers cost no import anything and catch a deletion by hand; an update by hand is
 * not seen (`tides run ability --rebuild` recomputes). `stage_marks` keeps, per stage, the counter
 * read after the stage's own writes, the UTC day it judged staleness by, a hash of its config
 * section and its counts; the stage writes it in the transaction of its results (ability/stage.ts).
 */
const V12_ABILITY_INPUTS = `
CREATE TABLE change_counters (
  name TEXT PRIMARY KEY,
  value INTEGER NOT NULL DEFAULT 0
);
INSERT INTO change_counters (name, value) VALUES ('ability_inputs', 0);

CREATE TABLE stage_marks (
  stage TEXT PRIMARY KEY,
  inputs INTEGER NOT NULL,
  day TEXT NOT NULL,
  config_hash TEXT NOT NULL,
  counts_json TEXT NOT NULL DEFAULT '{}',
  updated_at TEXT NOT NULL
);
${['people', 'roles', 'items', 'responses']
  .map(
    (table) => `CREATE TRIGGER ${table}_ability_inputs_deleted AFTER DELETE ON ${table} BEGIN
  UPDATE change_counters SET value = value + 1 WHERE name = 'ability_inputs';
END;`,
  )
  .join('\n')}
CREATE TRIGGER abilities_ability_inputs_deleted AFTER DELETE ON abilities WHEN OLD.origin = 'import' BEGIN
  UPDATE change_counters SET value = value + 1 WHERE name = 'ability_inputs';
END;
`

/**
 * Migration 13: counts of postings per (month, title, occupation) kept for the plan's role
 * suggestions, and what tells when a month's counts are stale. `month_versions` has a version per
 * (kind, month) moved on whenever a document starts or stops counting in the demand aggregates there
 * (db/curves.ts DemandDelta, clearDemandCounts), filled here for the months that have counted
 * documents. `title_months` holds, per month, title and occupation ('' for none), how many counted
 * postings there are and, as varint pairs (concept code, postings mentioning it directly), their
 * concepts; `title_month_marks` the month version each month's rows were computed at
 * (db/title-months.ts). The plan fills them for the months it reads: at a million postings with a
 * workforce, reading every posting of its 24-month window took about 3.5 s of each run.
 * `documents_titles` (covering the query) lets a month's titles and occupations be read without the
 * documents' rows: the occupation is stored after the body, so reading it from the row reads the
 * whole posting (recomputing 24 months at a million postings took 3.5 s that way).
 */
const V13_TITLE_MONTHS = `
CREATE TABLE month_versions (
  kind TEXT NOT NULL,
  month TEXT NOT NULL,
  version INTEGER NOT NULL,
  PRIMARY KEY (kind, month)
) WITHOUT ROWID;
INSERT INTO month_versions (kind, month, version)
  SELECT CASE series WHEN 'external' THEN 'posting' ELSE 'request' END, month, 1 FROM demand_totals;

CREATE TABLE title_months (
  month TEXT NOT NULL,
  title TEXT NOT NULL,
  occupation TEXT NOT NULL,
  postings INTEGER NOT NULL,
  counts BLOB NOT NULL,
  PRIMARY KEY (month, title, occupation)
) WITHOUT ROWID;

CREATE TABLE title_month_marks (
  month TEXT PRIMARY KEY,
  version INTEGER NOT NULL
) WITHOUT ROWID;

CREATE INDEX documents_titles ON documents(kind, month, duplicate_of, title, occupation);
`

/**
 * Migration 14: `mentions` keeps a document's direct mentions only (via 'text' or 'skills', checked). A
 * broader concept's roll-up is derived from them and `concept_broader` when it is read
 * (db/ancestry.ts): stored, roll-ups were 60% of the rows (15.6 of 26.2 million at a million
 * postings), and every one of them was a random insert into the concept index. An index on
 * `concept_broader(broader_id)` lets readers walk down from a broader concept to its narrower ones.
 */
const V14_DIRECT_MENTIONS = `
CREATE TABLE mentions_v14 (
  document_id INTEGER NOT NULL REFERENCES documents(id) ON DELETE CASCADE,
  concept_id TEXT NOT NULL REFERENCES concepts(id) ON DELETE CASCADE,
  count INTEGER NOT NULL,
  first_offset INTEGER,
  via TEXT NOT NULL CHECK (via IN ('text', 'skills')),
  PRIMARY KEY (document_id, concept_id)
) WITHOUT ROWID;
INSERT INTO mentions_v14 (document_id, concept_id, count, first_offset, via)
  SELECT document_id, concept_id, count, first_offset, via FROM mentions WHERE via <> 'rollup' ORDER BY document_id, concept_id;
DROP TABLE mentions;
ALTER TABLE mentions_v14 RENAME TO mentions;
CREATE INDEX mentions_concept ON mentions(concept_id);
CREATE INDEX concept_broader_broader ON concept_broader(broader_id, concept_id);
`

export const MIGRATIONS: readonly Migration[] = [
  { version: 1, name: 'core tables', sql: V1_CORE },
  { version: 2, name: 'indexes for duplicates, states and ranks', sql: V2_RUN_INDEXES },
  { version: 3, name: 'demand aggregates; mentions and demand without rowid', sql: V3_DEMAND_AGGREGATES },
  { version: 4, name: 'dashboard reads the demand aggregates; per-fit demand copy dropped', sql: V4_DROP_DEMAND_COPY },
  { version: 5, name: 'index of the unmapped originals only', sql: V5_UNMAPPED_ORIGINALS },
  { version: 6, name: 'recent band rows; signature sketches', sql: V6_BAND_LEVELS_AND_SKETCHES },
  { version: 7, name: 'direct mentions per document as one row of concept codes', sql: V7_MENTION_LISTS },
  { version: 8, name: 'compiled matcher cache', sql: V8_MATCHER_CACHE },
  { version: 9, name: 'the map queue replaces documents.mapped_version', sql: V9_MAP_QUEUE },
  { version: 10, name: 'curve month series as a binary column', sql: V10_CURVE_SERIES },
  { version: 11, name: 'curve states listed from their index', sql: V11_CURVE_STATES_INDEX },
  { version: 12, name: 'change counter of the ability inputs; stage marks', sql: V12_ABILITY_INPUTS },
  { version: 13, name: 'posting counts per month, title and occupation; month versions', sql: V13_TITLE_MONTHS },
  { version: 14, name: 'direct mentions only; roll-ups derived from broader links', sql: V14_DIRECT_MENTIONS },
]

/** The schema version this build of the program writes. */
export const SCHEMA_VERSION = MIGRATIONS[MIGRATIONS.length - 1]!.version
