// Reads the import graph of src-main and src-renderer from the source text, with the TypeScript parser (so
// comments and strings never count as imports). An edge is any way one file makes another load: import and
// export-from statements, `import()` calls, `new URL('./x.ts', import.meta.url)` worker entries and
// `./x.ts?nodeWorker` imports. Each edge records whether it carries only types (`import type`, or every
// named binding marked `type`), since type-only imports vanish from the built code.
import { readdirSync, readFileSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import ts from 'typescript';

export interface ImportEdge {
  /** Importing file, relative to the repository root with forward slashes. */
  from: string;
  /** The specifier as written. */
  specifier: string;
  /** Resolved file relative to the root, for relative specifiers; undefined for packages and built-ins. */
  to?: string;
  typeOnly: boolean;
  /** 1-based line of the import in `from`. */
  line: number;
  kind: 'import' | 'export' | 'dynamic' | 'url';
}

const SOURCE = /\.(ts|mts|mjs|js|svelte)$/;

/** Every source file under `dirs` (relative to `root`), skipping declaration files. */
export function sourceFiles(root: string, dirs: string[]): string[] {
  const out: string[] = [];
  const walk = (dir: string): void => {
    for (const entry of readdirSync(join(root, dir), { withFileTypes: true })) {
      const rel = `${dir}/${entry.name}`;
      if (entry.isDirectory()) walk(rel);
      else if (SOURCE.test(entry.name) && !entry.name.endsWith('.d.ts')) out.push(rel);
    }
  };
  for (const d of dirs) walk(d);
  return out.sort();
}

/** The script blocks of a Svelte component, each with the line it starts on (markup holds no imports). */
function svelteScripts(text: string): { code: string; firstLine: number }[] {
  const blocks: { code: string; firstLine: number }[] = [];
  for (const m of text.matchAll(/<script\b[^>]*>([\s\S]*?)<\/script>/g)) {
    const start = (m.index ?? 0) + m[0].indexOf('>') + 1;
    blocks.push({ code: m[1], firstLine: text.slice(0, start).split('\n').length });
  }
  return blocks;
}

function isImportMetaUrl(node: ts.Node): boolean {
  return (
    ts.isPropertyAccessExpression(node) &&
    node.name.text === 'url' &&
    ts.isMetaProperty(node.expression) &&
    node.expression.keywordToken === ts.SyntaxKind.ImportKeyword
  );
}

/** The imports written in one piece of script text. */
export function importsInCode(code: string, fileName = 'x.ts'): Omit<ImportEdge, 'from' | 'to'>[] {
  const sf = ts.createSourceFile(fileName, code, ts.ScriptTarget.Latest, true, ts.ScriptKind.TS);
  const out: Omit<ImportEdge, 'from' | 'to'>[] = [];
  const lineOf = (n: ts.Node): number => sf.getLineAndCharacterOfPosition(n.getStart(sf)).line + 1;
  const visit = (node: ts.Node): void => {
    if (ts.isImportDeclaration(node) && ts.isStringLiteral(node.moduleSpecifier)) {
      const clause = node.importClause;
      let typeOnly = false;
      if (clause) {
        const named = clause.namedBindings;
        typeOnly =
          clause.isTypeOnly ||
          (!clause.name && !!named && ts.isNamedImports(named) && named.elements.length > 0 && named.elements.every((e) => e.isTypeOnly));
      }
      out.push({ specifier: node.moduleSpecifier.text, typeOnly, line: lineOf(node), kind: 'import' });
    } else if (ts.isExportDeclaration(node) && node.moduleSpecifier && ts.isStringLiteral(node.moduleSpecifier)) {
      const named = node.exportClause;
      const typeOnly =
        node.isTypeOnly || (!!named && ts.isNamedExports(named) && named.elements.length > 0 && named.elements.every((e) => e.isTypeOnly));
      out.push({ specifier: node.moduleSpecifier.text, typeOnly, line: lineOf(node), kind: 'export' });
    } else if (
      ts.isCallExpression(node) &&
      node.expression.kind === ts.SyntaxKind.ImportKeyword &&
      node.arguments.length > 0 &&
      ts.isStringLiteralLike(node.arguments[0])
    ) {
      out.push({ specifier: node.arguments[0].text, typeOnly: false, line: lineOf(node), kind: 'dynamic' });
    } else if (
      ts.isImportTypeNode(node) &&
      ts.isLiteralTypeNode(node.argument) &&
      ts.isStringLiteral(node.argument.literal)
    ) {
      // `import('./x.ts').T` in a type position.
      out.push({ specifier: node.argument.literal.text, typeOnly: true, line: lineOf(node), kind: 'dynamic' });
    } else if (
      ts.isNewExpression(node) &&
      ts.isIdentifier(node.expression) &&
      node.expression.text === 'URL' &&
      node.arguments?.length === 2 &&
      ts.isStringLiteralLike(node.arguments[0]) &&
      isImportMetaUrl(node.arguments[1]) &&
      SOURCE.test(node.arguments[0].text)
    ) {
      // A worker entry: the file named here is loaded as code (folders and data files are not).
      out.push({ specifier: node.arguments[0].text, typeOnly: false, line: lineOf(node), kind: 'url' });
    }
    ts.forEachChild(node, visit);
  };
  visit(sf);
  return out;
}

/** All import edges of the given files; relative specifiers are resolved to files (query strings dropped). */
export function readImportGraph(root: string, files: string[]): ImportEdge[] {
  const edges: ImportEdge[] = [];
  for (const file of files) {
    const text = readFileSync(join(root, file), 'utf8');
    const blocks = file.endsWith('.svelte') ? svelteScripts(text) : [{ code: text, firstLine: 1 }];
    for (const block of blocks) {
      for (const imp of importsInCode(block.code, file.replace(/\.svelte$/, '.svelte.ts'))) {
        const edge: ImportEdge = { from: file, ...imp, line: imp.line + block.firstLine - 1 };
        if (imp.specifier.startsWith('.')) {
          const path = imp.specifier.replace(/\?.*$/, '');
          edge.to = relative(root, resolve(root, dirname(file), path)).split('\\').join('/');
        }
        edges.push(edge);
      }
    }
  }
  return edges;
}

/**
 * Cycles among files, following every edge (type-only ones included: a cycle of types still ties two files
 * into one unit). Returns one path per strongly connected component, as `a -> b -> … -> a`.
 */
export function findCycles(edges: ImportEdge[]): string[][] {
  const next = new Map<string, Set<string>>();
  for (const e of edges) {
    if (!e.to) continue;
    if (!next.has(e.from)) next.set(e.from, new Set());
    next.get(e.from)!.add(e.to);
  }
  const nodes = [...new Set([...next.keys(), ...[...next.values()].flatMap((s) => [...s])])].sort();
  // Tarjan's strongly connected components, iterative enough for a source tree (recursion depth = chain length).
  let index = 0;
  const idx = new Map<string, number>();
  const low = new Map<string, number>();
  const stack: string[] = [];
  const onStack = new Set<string>();
  const components: string[][] = [];
  const strong = (v: string): void => {
    idx.set(v, index);
    low.set(v, index);
    index++;
    stack.push(v);
    onStack.add(v);
    for (const w of [...(next.get(v) ?? [])].sort()) {
      if (!idx.has(w)) {
        strong(w);
        low.set(v, Math.min(low.get(v)!, low.get(w)!));
      } else if (onStack.has(w)) {
        low.set(v, Math.min(low.get(v)!, idx.get(w)!));
      }
    }
    if (low.get(v) === idx.get(v)) {
      const comp: string[] = [];
      let w: string;
      do {
        w = stack.pop()!;
        onStack.delete(w);
        comp.push(w);
      } while (w !== v);
      const selfLoop = next.get(v)?.has(v) ?? false;
      if (comp.length > 1 || selfLoop) components.push(comp);
    }
  };
  for (const v of nodes) if (!idx.has(v)) strong(v);
  // For each component, one concrete cycle through its first file (shortest by breadth-first search).
  return components.map((comp) => {
    const inside = new Set(comp);
    const start = [...comp].sort()[0];
    const prev = new Map<string, string>();
    const queue = [start];
    const seen = new Set([start]);
    while (queue.length > 0) {
      const v = queue.shift()!;
      for (const w of [...(next.get(v) ?? [])].sort()) {
        if (!inside.has(w)) continue;
        if (w === start) {
          const path = [start];
          for (let u: string | undefined = v; u !== undefined && u !== start; u = prev.get(u)) path.splice(1, 0, u);
          return [...path, start];
        }
        if (!seen.has(w)) {
          seen.add(w);
          prev.set(w, v);
          queue.push(w);
        }
      }
    }
    return [start, start];
  });
}
