/**
 * The shape every error catalog of the project shares, and the one template filler.
 *
 * Each area (a package or a service) declares its codes once, in its own catalog, with what the
 * code means, the message template its errors are written from and, where the error reaches HTTP,
 * the status it answers with. The project's registry (scripts/error-registry.ts) gathers every
 * catalog: a test there fails when a code is declared twice, belongs to no catalog, or is missing
 * from ERRORS.md. This package is a leaf: it imports nothing, so even packages/thermo may use it.
 */

export interface ErrorSpec {
  /** What the error means for the person who meets it, one or two sentences. */
  readonly meaning: string;
  /**
   * The message, with `{name}` for each value the error carries. Areas whose errors carry a
   * message written at the place they are raised (store, jobs, ingest) leave it out.
   */
  readonly template?: string;
  /** The HTTP status it answers with, where it reaches HTTP. */
  readonly status?: number;
  /** A code no longer raised; it stays listed so that it is never given another meaning. */
  readonly retired?: true;
}

export type ErrorCatalog = Readonly<Record<string, ErrorSpec>>;

export type TemplateParams = Readonly<Record<string, string | number | boolean | null | undefined>>;

/** Fill a template's `{name}` fields; a missing value shows as `?` so the gap is visible. */
export function formatTemplate(template: string, params: TemplateParams): string {
  return template.replace(/\{(\w+)\}/g, (_, name: string) => {
    const v = params[name];
    return v === undefined || v === null ? '?' : String(v);
  });
}

/** The message of `code` in `catalog`, filled with `params`. */
export function formatError<C extends ErrorCatalog>(
  catalog: C,
  code: keyof C,
  params: TemplateParams,
): string {
  const template = catalog[code]?.template;
  if (template === undefined) throw new Error(`error code ${String(code)} has no template in its catalog`);
  return formatTemplate(template, params);
}
