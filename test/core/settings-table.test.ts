// The one table of model settings and the four places that read it: the command line, the window's form, the
// API schema and the engine's checks (resolveSettings and the feature check) accept the same values and refuse
// the same values. Every boundary comes from the table; each place is asked on its own.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import {
  DEFAULT_SETTINGS,
  NUMERIC_SETTINGS,
  SPECIES_SETTING,
  SPLIT_SETTING,
  TUNABLE_SETTINGS,
  parseSpeciesSplit,
  speciesSplitText,
  describeSettings,
  limitsText,
  settingsProblems,
  type ModelSettings,
  type NumericSettingSpec,
} from '../../src-main/core/settings-table.ts';
import { parseArgs } from '../../src-main/cli/args.ts';
import { parseSettings, parseTune, settingOptions, tuneOptions } from '../../src-main/cli/learn-options.ts';
import { apiSchemas, modelSettingsSchema } from '../../src-main/api/contract.ts';
import { resolveSettings } from '../../src-main/core/learning/model.ts';
import { checkFeatureSettings } from '../../src-main/core/descriptors/features.ts';
import type { FeatureSettings } from '../../src-main/core/descriptors/feature-types.ts';
import { fields, regularisationField } from '../../src-renderer/lib/settings.ts';

/** The other settings chosen so that the rules between settings hold for `value` (largest cutoff, smallest widths). */
function around(spec: NumericSettingSpec, value: number): Partial<ModelSettings> {
  const geometric = spec.key === 'cutoffRadius' || spec.key === 'switchWidth' || spec.key === 'densityWidth';
  const context: Partial<ModelSettings> = geometric ? { cutoffRadius: 20, switchWidth: 0.01, densityWidth: 0.01 } : {};
  return { ...context, [spec.key]: value };
}

function cliAccepts(s: Partial<ModelSettings>): boolean {
  const argv: string[] = [];
  for (const spec of NUMERIC_SETTINGS) {
    const v = s[spec.key];
    if (typeof v === 'number') argv.push(`--${spec.option}`, String(v));
  }
  try {
    parseSettings(parseArgs(argv, settingOptions));
    return true;
  } catch {
    return false;
  }
}

function apiAccepts(s: Partial<ModelSettings>): boolean {
  const request = { tensorKey: 'eps', kind: 'eps', route: 'cm', settings: s };
  return modelSettingsSchema.partial().safeParse(s).success && apiSchemas.startJob.safeParse({ kind: 'train', params: { datasetId: 'd', request } }).success;
}

function engineAccepts(s: Partial<ModelSettings>): boolean {
  try {
    resolveSettings(s);
    return true;
  } catch {
    return false;
  }
}

function featureCheckAccepts(s: Partial<ModelSettings>): boolean {
  const m = { ...DEFAULT_SETTINGS, ...s };
  const fs: FeatureSettings = { cutoff: m.cutoffRadius, cutoffWidth: m.switchWidth, sigma: m.densityWidth, nmax: m.radialFunctions, lmax: m.angularOrder, species: ['O', 'H'], centres: ['O'], nmaxTensor: 1, lmaxTensor: 0 };
  try {
    checkFeatureSettings(fs);
    return true;
  } catch {
    return false;
  }
}

function formAllows(spec: NumericSettingSpec, value: number): boolean {
  const f = spec.key === 'regularisation' ? regularisationField : fields.find((x) => x.key === spec.key);
  if (!f) return false;
  return value >= f.min && value <= f.max && (!f.integer || Number.isInteger(value));
}

const FEATURE_KEYS = new Set(['cutoffRadius', 'switchWidth', 'densityWidth', 'radialFunctions', 'angularOrder']);

describe('the settings table', () => {
  it('has defaults that every place accepts, and one row per setting', () => {
    expect(settingsProblems(DEFAULT_SETTINGS)).toEqual([]);
    expect([...NUMERIC_SETTINGS.map((s) => s.key), SPECIES_SETTING.key, SPLIT_SETTING.key].sort()).toEqual(Object.keys(DEFAULT_SETTINGS).sort());
    expect(engineAccepts({})).toBe(true);
    expect(apiAccepts({ ...DEFAULT_SETTINGS })).toBe(true);
    expect(cliAccepts({})).toBe(true);
    // Option names and keys are unique.
    expect(new Set(NUMERIC_SETTINGS.map((s) => s.option)).size).toBe(NUMERIC_SETTINGS.length);
  });

  it('the species split: the CLI, the form’s reader, the API and the engine accept and refuse the same values', () => {
    const cli = (text: string) => {
      try {
        return parseSettings(parseArgs([`--${SPLIT_SETTING.option}`, text], settingOptions)).speciesSplit;
      } catch {
        return 'refused';
      }
    };
    for (const text of ['free-atom', 'O:0.80,H:0.67', 'O:3,H:1,C:2']) {
      const form = parseSpeciesSplit(text);
      if (!('split' in form)) throw new Error(`the form refused ${text}`);
      expect(cli(text)).toEqual(form.split);
      expect(apiAccepts({ speciesSplit: form.split })).toBe(true);
      expect(engineAccepts({ speciesSplit: form.split })).toBe(true);
      // written back as the CLI reads it
      expect(parseSpeciesSplit(speciesSplitText(form.split))).toEqual(form);
    }
    for (const text of ['O:0.8', 'O:0,H:1', 'O:x,H:1', 'O:1,O:2', 'free atom']) {
      expect('problem' in parseSpeciesSplit(text)).toBe(true);
      expect(cli(text)).toBe('refused');
    }
    for (const bad of [{ O: 0, H: 1 }, { O: -1, H: 1 }, { 'O H': 1, H: 1 }] as Record<string, number>[]) {
      expect(apiAccepts({ speciesSplit: bad })).toBe(false);
      expect(engineAccepts({ speciesSplit: bad })).toBe(false);
    }
  });

  it('the form shows every numeric setting, with the table’s limits, labels and help', () => {
    expect(fields.map((f) => f.key).sort()).toEqual(NUMERIC_SETTINGS.filter((s) => s.key !== 'regularisation').map((s) => s.key).sort());
    for (const f of fields) expect(f.label.length).toBeGreaterThan(3);
  });

  for (const spec of NUMERIC_SETTINGS) {
    const step = spec.integer ? 1 : Math.max(spec.min * 1e-3, 1e-9);
    const inside = [spec.min, spec.max, ...(spec.integer ? [] : [(spec.min + spec.max) / 2])];
    const outside = [spec.min - step, spec.max + (spec.integer ? 1 : spec.max * 1e-3), ...(spec.integer && spec.max > spec.min ? [spec.min + 0.5] : [])];
    it(`${spec.option}: the CLI, the form, the API and the engine agree at the limits ${spec.min}…${spec.max}`, () => {
      for (const v of [...inside, ...outside]) {
        const s = around(spec, v);
        const expected = inside.includes(v);
        const answers = { form: formAllows(spec, v), cli: cliAccepts(s), api: apiAccepts(s), engine: engineAccepts(s), ...(FEATURE_KEYS.has(spec.key) ? { features: featureCheckAccepts(s) } : {}) };
        const want = Object.fromEntries(Object.keys(answers).map((k) => [k, expected]));
        expect({ value: v, ...answers }).toEqual({ value: v, ...want });
      }
    });
  }

  it('the rules between settings hold in the CLI, the API and the engine alike', () => {
    for (const s of [{ cutoffRadius: 3, switchWidth: 3.5 }, { cutoffRadius: 3, densityWidth: 3 }] as Partial<ModelSettings>[]) {
      expect({ cli: cliAccepts(s), api: apiAccepts(s), engine: engineAccepts(s), features: featureCheckAccepts(s) }).toEqual({ cli: false, api: false, engine: false, features: false });
    }
    const ok: Partial<ModelSettings> = { cutoffRadius: 3, switchWidth: 3, densityWidth: 2.9 };
    expect({ cli: cliAccepts(ok), api: apiAccepts(ok), engine: engineAccepts(ok), features: featureCheckAccepts(ok) }).toEqual({ cli: true, api: true, engine: true, features: true });
  });

  it('the CLI names every setting by the table’s option, and tuning lists are held to the same limits', () => {
    const names = settingOptions.map((o) => o.name);
    for (const spec of NUMERIC_SETTINGS) expect(names).toContain(spec.option);
    expect(names).toContain(SPECIES_SETTING.option);
    expect(tuneOptions.map((o) => o.name)).toEqual(['tune-cutoff-radius', 'tune-density-width', 'tune-kernel-exponent']);
    const tune = (argv: string[]) => parseTune(parseArgs(argv, tuneOptions));
    expect(tune(['--tune-cutoff-radius', '4,5'])).toEqual({ cutoffRadius: [4, 5] });
    expect(() => tune(['--tune-cutoff-radius', '4,25'])).toThrow(/cutoff radius 25 Å is not allowed: use 0.5–20 Å/);
    expect(() => tune(['--tune-kernel-exponent', '1.5'])).toThrow(/a whole number 1–8/);
    expect(TUNABLE_SETTINGS.length).toBe(3);
  });

  it('contributing species: labels, not repeated, same in every place', () => {
    const parse = (list: string) => parseSettings(parseArgs(['--contributing-species', list], settingOptions));
    expect(parse('O, H').contributingSpecies).toEqual(['O', 'H']);
    expect(() => parse('O,O')).toThrow(/repeat/);
    expect(engineAccepts({ contributingSpecies: ['O', 'O'] })).toBe(false);
    expect(apiAccepts({ contributingSpecies: ['O', 'O'] })).toBe(false);
    expect(apiAccepts({ contributingSpecies: ['Oxygen'] })).toBe(false);
    expect(engineAccepts({ contributingSpecies: ['Oxygen'] })).toBe(false);
  });

  it('the README lists every option of the table, with its default and limits', () => {
    const readme = readFileSync(new URL('../../README.md', import.meta.url), 'utf8');
    for (const spec of NUMERIC_SETTINGS) {
      const row = readme.split('\n').find((l) => l.startsWith(`| \`--${spec.option} `));
      expect(row, `README row of --${spec.option}`).toBeDefined();
      const d = DEFAULT_SETTINGS[spec.key];
      if (d !== null) expect(row).toContain(`| ${d} |`);
      expect(row).toContain(limitsText(spec).replace('a whole number ', '').replace('e-14', 'e-14'));
    }
    expect(readme).toContain(`\`--${SPECIES_SETTING.option} LIST\``);
  });

  it('describes settings in words, without the symbols of the maths', () => {
    const text = describeSettings(DEFAULT_SETTINGS);
    expect(text).toBe('cutoff radius 4.5 Å, switch width 0.5 Å, density width 0.4 Å, 6 radial functions, angular order 4, kernel exponent 1 (linear)');
  });
});
