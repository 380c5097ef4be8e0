/** The run's verdicts: each a target of issue 17, met or not, and the printed tables. */
export interface Verdict {
  readonly part: string;
  readonly target: string;
  readonly ok: boolean;
  readonly detail: string;
  /** Set when the failure is a defect issue 18 lists (being fixed elsewhere): "issue 18 #12". */
  readonly known?: string | undefined;
}

export function table(headers: readonly string[], rows: readonly (readonly (string | number)[])[]): string {
  const cells = [headers, ...rows].map((r) => r.map(String));
  const widths = headers.map((_, i) => Math.max(...cells.map((r) => (r[i] ?? '').length)));
  const line = (r: readonly string[]) => `| ${r.map((c, i) => c.padEnd(widths[i] ?? 0)).join(' | ')} |`;
  return [
    line(cells[0] ?? []),
    `|${widths.map((w) => '-'.repeat(w + 2)).join('|')}|`,
    ...cells.slice(1).map(line),
  ].join('\n');
}

export function verdictTable(verdicts: readonly Verdict[]): string {
  return table(
    ['part', 'target', 'result', 'detail'],
    verdicts.map((v) => [
      v.part,
      v.target,
      v.ok ? 'pass' : v.known === undefined ? 'FAIL' : `FAIL (known: ${v.known})`,
      v.detail,
    ]),
  );
}
