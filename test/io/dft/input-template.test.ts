// DFT input templates (io/dft/input-template.ts) made from the real CP2K and Quantum ESPRESSO inputs of
// test/fixtures/dft (the runs made here by make-fixtures.sh): the placeholders put in by hand where the
// structure was, filled with the structure `collect` read back from those runs. The filled inputs must give the
// original inputs' cell and atoms (to the digits the originals print), and every other line unchanged.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { collectTexts } from '../../../src-main/app/collect-references.ts';
import { fillTemplate, parseTemplate } from '../../../src-main/io/dft/input-template.ts';
import { parseCp2kInput, section } from '../../../src-main/io/dft/cp2k-input.ts';
import { filesByName } from '../../../src-main/io/dft/dft-run.ts';
import { readCp2kRun } from '../../../src-main/io/dft/cp2k.ts';
import { makeFrame } from '../../../src-main/core/geometry/frame.ts';

const fixtures = join(__dirname, '../../fixtures/dft');
const read = (p: string) => readFileSync(join(fixtures, p), 'utf8');

/** Lines of `filled` that are not the lines of `template` holding placeholders must equal the template's. */
function otherLinesKept(template: string, filled: string, atoms: number): void {
  const t = template.split('\n');
  const f = filled.split('\n');
  expect(f.length).toBe(t.length + atoms - 1);
  let j = 0;
  for (const line of t) {
    if (line.includes('{{atoms}}')) j += atoms;
    else if (/\{\{/.test(line)) j++;
    else expect(f[j++]).toBe(line);
  }
}

function numbersOf(lines: string[]): number[][] {
  return lines.map((l) => l.trim().split(/\s+/).slice(1).map(Number));
}

describe('DFT input templates from the real fixture inputs', () => {
  it('CP2K (water-c.inp): &CELL vectors and &COORD filled; the collect reader reads back the run\'s structure', () => {
    const original = read('cp2k/water-c.inp');
    const coordLines = original.split('\n').filter((l) => /^\s+[OH]\s+-?\d/.test(l));
    expect(coordLines.length).toBe(24);
    const template = original
      .replace('      ABC 6.21 6.21 6.21', '      A {{cell_a}}\n      B {{cell_b}}\n      C {{cell_c}}')
      .replace(coordLines.join('\n'), '      {{atoms}}')
      .replace('PROJECT water-c', 'PROJECT water-frame{{frame}}');
    const t = parseTemplate(template, 'water.inp.template');
    // the structure as collect reads it from the real run (cell from the input, atoms as the run used them)
    const files = filesByName([{ name: 'water-c.inp', text: original }, { name: 'water-c.xyz', text: read('cp2k/water-c.xyz') }]);
    const run = readCp2kRun('water-c.out', read('cp2k/water-c.out'), files);
    if (!run.ok) throw new Error(run.unusable.reason);
    const frame = run.run.frame;
    const filled = fillTemplate(t, frame, 17);
    otherLinesKept(template, filled, 24);
    expect(filled).toContain('PROJECT water-frame17');
    const subsys = section(parseCp2kInput('filled.inp', {}, filesByName([{ name: 'filled.inp', text: filled }])), 'FORCE_EVAL', 'SUBSYS');
    const cell = ['A', 'B', 'C'].map((k) => section(subsys, 'CELL')!.keywords.find((w) => w.name === k)!.value.split(/\s+/).map(Number));
    expect(cell).toEqual([[6.21, 0, 0], [0, 6.21, 0], [0, 0, 6.21]]); // the original's ABC 6.21 6.21 6.21 (Å)
    const rows = section(subsys, 'COORD')!.rows.map((r) => r.value);
    const got = numbersOf(rows);
    const want = numbersOf(coordLines);
    expect(rows.map((r) => r.trim().split(/\s+/)[0])).toEqual(coordLines.map((r) => r.trim().split(/\s+/)[0]));
    for (let i = 0; i < 24; i++) for (let k = 0; k < 3; k++) expect(Math.abs(got[i][k] - want[i][k])).toBeLessThan(5e-7); // printed to 6 decimals
    // the collect reader, given the filled input in place of the original, reads the same structure
    const again = readCp2kRun('water-c.out', read('cp2k/water-c.out'), filesByName([{ name: 'water-c.inp', text: filled }, { name: 'water-c.xyz', text: read('cp2k/water-c.xyz') }]));
    if (!again.ok) throw new Error(again.unusable.reason);
    expect(Array.from(again.run.frame.cell!)).toEqual(Array.from(frame.cell!));
    for (let i = 0; i < frame.positions.length; i++) expect(Math.abs(again.run.frame.positions[i] - frame.positions[i])).toBeLessThan(1e-9);
  });

  it('Quantum ESPRESSO (si-angstrom.pw.in): CELL_PARAMETERS and ATOMIC_POSITIONS angstrom, nat filled; the rest unchanged', () => {
    const original = read('qe/si-angstrom.pw.in');
    const template = original
      .replace('nat = 2', 'nat = {{atom_count}}')
      .replace(/CELL_PARAMETERS angstrom\n(.*\n){3}/, 'CELL_PARAMETERS angstrom\n  {{cell_a}}\n  {{cell_b}}\n  {{cell_c}}\n')
      .replace(/ATOMIC_POSITIONS angstrom\n(.*\n){2}/, 'ATOMIC_POSITIONS angstrom\n  {{atoms}}\n');
    const t = parseTemplate(template, 'si.pw.in.template');
    // the structure collect reads from the real pw.x + ph.x run
    const names = ['si-angstrom.pw.out', 'si-angstrom.ph.out', 'si-angstrom.pw.in', 'si-angstrom.ph.in'];
    const r = collectTexts(names.map((n) => ({ name: n, text: read(`qe/${n}`) })));
    expect(r.runs.length).toBe(1);
    const frame = r.runs[0].frame;
    const filled = fillTemplate(t, frame, 0);
    otherLinesKept(template, filled, 2);
    const lines = filled.split('\n');
    expect(lines).toContain('  nat = 2');
    const at = (head: string, n: number) => lines.slice(lines.indexOf(head) + 1, lines.indexOf(head) + 1 + n);
    const origLines = original.split('\n');
    const origAt = (head: string, n: number) => origLines.slice(origLines.indexOf(head) + 1, origLines.indexOf(head) + 1 + n);
    const cellGot = at('CELL_PARAMETERS angstrom', 3).map((l) => l.trim().split(/\s+/).map(Number));
    const cellWant = origAt('CELL_PARAMETERS angstrom', 3).map((l) => l.trim().split(/\s+/).map(Number));
    // pw.x prints the cell in alat units to 6 digits: agreement to the original's 3 decimals
    for (let a = 0; a < 3; a++) for (let k = 0; k < 3; k++) expect(Math.abs(cellGot[a][k] - cellWant[a][k])).toBeLessThan(1e-3);
    const posGot = numbersOf(at('ATOMIC_POSITIONS angstrom', 2));
    const posWant = numbersOf(origAt('ATOMIC_POSITIONS angstrom', 2));
    for (let i = 0; i < 2; i++) for (let k = 0; k < 3; k++) expect(Math.abs(posGot[i][k] - posWant[i][k])).toBeLessThan(1e-3);
    expect(at('ATOMIC_POSITIONS angstrom', 2).every((l) => l.startsWith('  Si '))).toBe(true);
  });

  it('bad templates are refused with file and line; frames without a cell are refused with the frame named', () => {
    expect(() => parseTemplate('&COORD\n  {{atom}}\n&END\n', 'in.tmpl')).toThrow(/in\.tmpl, line 2: unknown placeholder "\{\{atom\}\}"/);
    expect(() => parseTemplate('A {{cell_a}}\nB {{cell_b}}\nC {{cell_c}}\n', 'in.tmpl')).toThrow(/in\.tmpl: the template has no \{\{atoms\}\}/);
    expect(() => parseTemplate('{{atoms}}\n', 'in.tmpl')).toThrow(/lacks one of \{\{cell_a\}\}/);
    expect(() => parseTemplate('A {{cell_a}} {{cell_b}} {{cell_c}}\n {{atoms}} x\n', 'in.tmpl')).toThrow(/line 2: \{\{atoms\}\} must end its line/);
    const t = parseTemplate('A {{cell_a}}\nB {{cell_b}}\nC {{cell_c}}\n  {{atoms}}\n', 'in.tmpl');
    expect(() => fillTemplate(t, makeFrame(['H'], [0, 0, 0], null), 3, { file: 'run.extxyz', frame: 3 })).toThrow(/run\.extxyz, frame 3: the frame has no cell/);
    const filled = fillTemplate(t, makeFrame(['O', 'H'], [0, 0, 0, 0.25, 0.5, -1], [2, 0, 0, 0, 3, 0, 0, 0, 4]), 3);
    expect(filled).toBe('A 2.0000000000 0.0000000000 0.0000000000\nB 0.0000000000 3.0000000000 0.0000000000\nC 0.0000000000 0.0000000000 4.0000000000\n  O 0.0000000000 0.0000000000 0.0000000000\n  H 0.2500000000 0.5000000000 -1.0000000000\n');
  });
});
