import { LineCounter, parseDocument } from 'yaml';
import type { ConfigProblem } from './configError.js';

export type YamlRead = { ok: true; value: Record<string, unknown> } | { ok: false; problems: ConfigProblem[] };

/**
 * Reads a YAML mapping for a config or scenario file. Plain YAML only: mappings, lists, text and
 * numbers. YAML 1.1 extras (`!!binary`, `!!set`, timestamps) and unknown tags are refused, aliases
 * are capped (an "alias bomb" is refused instead of exhausting memory), and every problem comes
 * back as a `line L, column C: YAML: …` line rather than an exception.
 */
export function readYamlMapping(text: string, what: string): YamlRead {
  const lineCounter = new LineCounter();
  const doc = parseDocument(text, { prettyErrors: false, uniqueKeys: true, resolveKnownTags: false, lineCounter });
  const broken = [...doc.errors, ...doc.warnings.filter((w) => w.code === 'TAG_RESOLVE_FAILED')];
  if (broken.length > 0) {
    return {
      ok: false,
      problems: broken.map((e) => {
        const pos = lineCounter.linePos(e.pos[0]);
        return { path: pos.line > 0 ? `line ${pos.line}, column ${pos.col}` : '', message: `YAML: ${e.message.split('\n')[0]}` };
      }),
    };
  }
  let value: unknown;
  try {
    value = doc.toJS({ maxAliasCount: 200 });
  } catch (err) {
    return { ok: false, problems: [{ path: '', message: `YAML: ${(err as Error).message.split('\n')[0]} — check the file's anchors (&name) and aliases (*name)` }] };
  }
  if (value === null || typeof value !== 'object' || Array.isArray(value)) {
    return { ok: false, problems: [{ path: '', message: `the file must be a YAML mapping (${what})` }] };
  }
  return { ok: true, value: value as Record<string, unknown> };
}
