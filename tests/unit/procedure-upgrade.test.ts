// Old runs name schema-1 procedure definitions stored as they were, and the station converts them to
// schema 2 each time it reads one: the conversion must never change, or an old run's procedure and
// sheet would change with it. docs/procedures.md ("The conversion is fixed") states it field by field;
// every expectation here is built from that documented mapping (its texts copied below and checked to
// be the document's) and from the stored schema-1 definition's own fields, never from running the
// conversion. The stored definitions are the demo procedure MG20-LF-TRIM revision B as the schema-4
// (94a4812), schema-6 (ef9ca93) and schema-7 (f60531f) releases wrote it into their fixtures.

import { copyFileSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import Database from 'better-sqlite3';
import { describe, expect, it } from 'vitest';
import { openStation } from '../../electron/services/station.ts';
import { upgradeProcedure } from '../../shared/procedures/procedure-file.ts';
import { procedureSchema } from '../../shared/procedures/procedure.ts';
import { tempDir } from '../support/station.ts';

const DOC = readFileSync(fileURLToPath(new URL('../../docs/procedures.md', import.meta.url)), 'utf8');
/** The section, its line breaks read as spaces (Markdown paragraphs wrap anywhere). */
const SECTION = DOC.slice(DOC.indexOf('### The conversion is fixed'), DOC.indexOf('## A complete example')).replace(/\s+/g, ' ');

// The documented texts and values, as docs/procedures.md gives them.
const ACKNOWLEDGEMENT = 'I have read this and the bench is safe to start.';
const NO_TRIM_LINE_LEFT = 'Record trim points from the safe end toward more compensation.';
const STANDARD_CAUTION =
  'The unit is mains powered and may be open: follow your workplace electrical-safety rules, and mute monitor speakers and headphones before any tone is played.';
const SAFETY_WORDS = ['safety', 'mute', 'hearing', 'mains', 'damage', 'danger', 'caution', 'warning', 'shock'];
const DEFAULTS = { requiresCalibration: false, expectedLevelDbfs: null, frequencyTolerancePercent: 1, harmonicOrder: 3, marginDb: 1, gainRiseDb: 0.5, lfRiseDb: 10 };

/** A schema-1 definition as stored: JSON, some fields possibly missing (written before they existed). */
interface StoredV1 {
  schemaVersion: 1;
  code: string;
  revision: string;
  title: string;
  invented: boolean;
  model: { code: string; name: string; maker: string };
  requiresCalibration?: boolean;
  serial: { pattern: string; example: string };
  trim: {
    stimulusHz: number;
    stimulusLevelDbfs: number;
    expectedLevelDbfs?: { low: number; high: number } | null;
    frequencyTolerancePercent?: number;
    positionUnit: string;
    positionMin: number;
    positionMax: number;
    positionStep: number;
    limitThdDb: number;
    harmonicOrder?: number;
    marginDb?: number;
    gainRiseDb?: number;
    lfRiseDb?: number;
    instructions: string[];
  };
}

/** The schema-2 procedure docs/procedures.md says `v1` becomes; `aboutSafety`: whether its first line is about safety, as the reader of the line judges it. */
function documentedUpgrade(v1: StoredV1, aboutSafety: boolean) {
  const t = v1.trim;
  const rest = aboutSafety ? t.instructions.slice(1) : t.instructions;
  return {
    schemaVersion: 2,
    code: v1.code,
    revision: v1.revision,
    title: v1.title,
    invented: v1.invented,
    model: { code: v1.model.code, name: v1.model.name, maker: v1.model.maker, channels: 1 },
    serial: { pattern: v1.serial.pattern, example: v1.serial.example },
    requiresCalibration: v1.requiresCalibration ?? DEFAULTS.requiresCalibration,
    steps: [
      { id: 'safety', title: 'Safety', kind: 'notice', instructions: aboutSafety ? [t.instructions[0]] : [STANDARD_CAUTION], acknowledgement: ACKNOWLEDGEMENT },
      {
        id: 'trim',
        title: v1.title,
        kind: 'trim',
        instructions: rest.length > 0 ? rest : [NO_TRIM_LINE_LEFT],
        stimulusHz: t.stimulusHz,
        stimulusLevelDbfs: t.stimulusLevelDbfs,
        expectedLevelDbfs: t.expectedLevelDbfs === undefined ? DEFAULTS.expectedLevelDbfs : t.expectedLevelDbfs,
        frequencyTolerancePercent: t.frequencyTolerancePercent ?? DEFAULTS.frequencyTolerancePercent,
        positionUnit: t.positionUnit,
        positionMin: t.positionMin,
        positionMax: t.positionMax,
        positionStep: t.positionStep,
        limitThdDb: t.limitThdDb,
        harmonicOrder: t.harmonicOrder ?? DEFAULTS.harmonicOrder,
        marginDb: t.marginDb ?? DEFAULTS.marginDb,
        gainRiseDb: t.gainRiseDb ?? DEFAULTS.gainRiseDb,
        lfRiseDb: t.lfRiseDb ?? DEFAULTS.lfRiseDb,
        onFail: 'stop',
      },
    ],
  };
}

/** The conversion as the station reads a stored definition: through the schema-1 schema, then upgraded. */
const upgradeStored = (stored: StoredV1) => upgradeProcedure(procedureSchema.parse(stored));

describe('docs/procedures.md states the fixed conversion', () => {
  it('with the texts, words and defaults this test expects', () => {
    expect(SECTION.length).toBeGreaterThan(0);
    expect(SECTION).toContain(`\`"${ACKNOWLEDGEMENT}"\``);
    expect(SECTION).toContain(`\`["${NO_TRIM_LINE_LEFT}"]\``);
    expect(SECTION).toContain(`\`"${STANDARD_CAUTION}"\``);
    expect(SECTION).toContain(SAFETY_WORDS.map((w) => `\`${w}\``).join(', '));
    expect(SECTION).toContain('`steps[0].id` | `"safety"`');
    expect(SECTION).toContain('`steps[0].title` | `"Safety"`');
    expect(SECTION).toContain('`steps[1].id` | `"trim"`');
    expect(SECTION).toContain('`steps[1].title` | `v1.title`');
    expect(SECTION).toContain('`steps[1].onFail` | `"stop"`');
    expect(SECTION).toContain('`model.channels` | `1`');
    expect(SECTION).toContain('`requiresCalibration` `false`');
    for (const field of ['expectedLevelDbfs', 'frequencyTolerancePercent', 'harmonicOrder', 'marginDb', 'gainRiseDb', 'lfRiseDb'] as const) {
      expect(SECTION).toContain(`\`${field}\` \`${DEFAULTS[field]}\``);
    }
  });
});

const FIXTURES = [
  { schema: 4, commit: '94a4812', runSerial: 'MG20-2611-0501' },
  { schema: 6, commit: 'ef9ca93', runSerial: 'MG20-2612-0701' },
  { schema: 7, commit: 'f60531f', runSerial: 'MG20-2612-0701' },
] as const;

describe.each(FIXTURES)('the demo procedure as the schema-$schema release ($commit) stored it', ({ schema, runSerial }) => {
  const fixture = fileURLToPath(new URL(`../fixtures/station-schema${schema}/trimbench.sqlite`, import.meta.url));

  it('upgrades field by field as documented, and an old run reads exactly that procedure', () => {
    const dir = tempDir('trimbench-procedure-upgrade-');
    try {
      copyFileSync(fixture, join(dir.path, 'as-found.sqlite'));
      copyFileSync(fixture, join(dir.path, 'trimbench.sqlite'));
      const raw = new Database(join(dir.path, 'as-found.sqlite'), { readonly: true });
      const row = raw.prepare<[], { definition_json: string }>("SELECT definition_json FROM procedures WHERE code = 'MG20-LF-TRIM' AND revision = 'B'").get()!;
      raw.close();
      // Schema 5 and later wrap each stored JSON value as { v: 1, value } (electron/services/stored-record.ts).
      const json = JSON.parse(row.definition_json);
      const stored: StoredV1 = schema >= 5 ? json.value : json;
      expect(stored.schemaVersion).toBe(1);
      expect([stored.code, stored.revision]).toEqual(['MG20-LF-TRIM', 'B']);
      // The demo's first line names muting and hearing: about safety, so it becomes the notice.
      expect(stored.trim.instructions[0]).toMatch(/^Mute or disconnect monitor speakers and headphones/);
      const expected = documentedUpgrade(stored, true);

      expect(upgradeStored(stored)).toStrictEqual(expected);

      // The same through the station's own read of an old run (the run detail's procedure file).
      const station = openStation({ dataDir: dir.path, stationName: 'bench-new', log: { record: () => '' } });
      try {
        const runId = station.records.lookUpUnit(runSerial)!.runs[0].run!.id;
        expect(station.records.getRun(runId).procedureFile).toStrictEqual(expected);
      } finally {
        station.close();
      }
    } finally {
      dir.remove();
    }
  });
});

describe('schema-1 definitions stored without later fields, and other first lines', () => {
  /** A revision-A-like definition written here by hand: no calibration flag, no window, none of the defaulted trim fields. */
  const bare = (instructions: string[]): StoredV1 => ({
    schemaVersion: 1,
    code: 'TX9-TRIM',
    revision: 'A',
    title: 'TX-9 trim (invented)',
    invented: true,
    model: { code: 'TX-9', name: 'TX-9 line stage', maker: 'Test Maker (invented)' },
    serial: { pattern: '^TX9-[0-9]{3}$', example: 'TX9-001' },
    trim: { stimulusHz: 20, stimulusLevelDbfs: -10, positionUnit: 'turns', positionMin: 0, positionMax: 8, positionStep: 0.5, limitThdDb: -55, instructions },
  });

  it('takes the documented defaults for every missing field', () => {
    const v1 = bare(['Set the trimmer to 0 turns.', 'Record a point at each half turn.']);
    expect(upgradeStored(v1)).toStrictEqual(documentedUpgrade(v1, false));
    // Spelled out: the standard caution first, both lines with the trim, the defaults in place.
    const trim = upgradeStored(v1).steps[1];
    expect(upgradeStored(v1).steps[0].instructions).toEqual([STANDARD_CAUTION]);
    expect(trim).toMatchObject({ instructions: ['Set the trimmer to 0 turns.', 'Record a point at each half turn.'], expectedLevelDbfs: null, frequencyTolerancePercent: 1, harmonicOrder: 3, marginDb: 1, gainRiseDb: 0.5, lfRiseDb: 10 });
    expect(upgradeStored(v1).requiresCalibration).toBe(false);
  });

  it('gives the trim the documented line when its only line became the notice', () => {
    const v1 = bare(['Mute the monitors.']);
    expect(upgradeStored(v1)).toStrictEqual(documentedUpgrade(v1, true));
    expect(upgradeStored(v1).steps[1].instructions).toEqual([NO_TRIM_LINE_LEFT]);
  });

  // The documented rule: one of the words, any case, not joined to a letter, a digit or "_".
  const lines: [string, boolean][] = [
    ...SAFETY_WORDS.map((word): [string, boolean] => [`Check the ${word} first.`, true]),
    ['WARNING: high voltage inside.', true],
    ['Follow the electrical-safety rules.', true],
    ['Keep the monitors muted.', false],
    ['Read safety_notes.txt before starting.', false],
    ['Turn the generator on.', false],
    ['Mains2 supply only.', false],
  ];
  it.each(lines)('“%s” about safety: %s', (line, aboutSafety) => {
    const v1 = bare([line, 'Record a point at each half turn.']);
    expect(upgradeStored(v1)).toStrictEqual(documentedUpgrade(v1, aboutSafety));
  });
});
