/**
 * The routes of the running API's OpenAPI document, each with a call built from its
 * schema: path parameters from the suite's own records, query parameters and JSON bodies
 * from the schema (the first enum value, a small number, a short string).
 */
export interface RouteSpec {
  readonly method: string;
  /** OpenAPI form, e.g. /api/machines/{id}. */
  readonly path: string;
  readonly pathParams: string[];
  readonly queryParams: { name: string; schema: JsonSchema; required: boolean }[];
  readonly body: JsonSchema | undefined;
}

export interface JsonSchema {
  type?: string | string[];
  properties?: Record<string, JsonSchema>;
  required?: string[];
  enum?: unknown[];
  items?: JsonSchema;
  format?: string;
  minimum?: number;
  exclusiveMinimum?: boolean | number;
  minLength?: number;
  anyOf?: JsonSchema[];
  oneOf?: JsonSchema[];
  default?: unknown;
}

interface OpenApiOperation {
  parameters?: { name: string; in: string; required?: boolean; schema?: JsonSchema }[];
  requestBody?: { content?: Record<string, { schema?: JsonSchema }> };
}

export function routesOf(doc: { paths?: Record<string, Record<string, OpenApiOperation>> }): RouteSpec[] {
  const out: RouteSpec[] = [];
  for (const [path, ops] of Object.entries(doc.paths ?? {})) {
    for (const [method, op] of Object.entries(ops)) {
      if (!['get', 'post', 'put', 'patch', 'delete'].includes(method)) continue;
      const params = op.parameters ?? [];
      out.push({
        method: method.toUpperCase(),
        path,
        pathParams: params.filter((p) => p.in === 'path').map((p) => p.name),
        queryParams: params
          .filter((p) => p.in === 'query')
          .map((p) => ({ name: p.name, schema: p.schema ?? {}, required: p.required === true })),
        body: op.requestBody?.content?.['application/json']?.schema,
      });
    }
  }
  return out;
}

let made = 0;
/** Values the schema's patterns want, by field name (the rest is found from the schema). */
const HINTS: Record<string, () => unknown> = {
  month: () => '2026-11',
  timeZone: () => 'UTC',
  username: () => `fault-made-${++made}`,
  until: () => new Date(Date.now() + 3_600_000).toISOString(),
  from: () => new Date(Date.now() - 7 * 86_400_000).toISOString(),
  to: () => new Date(Date.now() - 86_400_000).toISOString(),
  warning: () => 2,
  alarm: () => 4,
};
/** Fields left out of a made body: alternatives the schema allows only one of. */
const LEAVE_OUT = new Set(['hours']);

/** A small valid-looking value for a schema; `text` replaces every string (injection strings). */
export function sample(schema: JsonSchema | undefined, text: string | undefined, key = ''): unknown {
  if (schema === undefined) return {};
  const hint = HINTS[key];
  if (hint !== undefined && text === undefined) return hint();
  const alt = schema.anyOf?.[0] ?? schema.oneOf?.[0];
  if (alt !== undefined) return sample(alt, text, key);
  if (schema.enum !== undefined) return text ?? schema.enum[0];
  const type = Array.isArray(schema.type) ? schema.type[0] : schema.type;
  if (type === 'object' || schema.properties !== undefined) {
    const o: Record<string, unknown> = {};
    for (const [k, s] of Object.entries(schema.properties ?? {})) {
      if (!LEAVE_OUT.has(k)) o[k] = sample(s, text, k);
    }
    return o;
  }
  if (type === 'array') return [sample(schema.items, text, key)];
  if (type === 'number' || type === 'integer')
    return schema.minimum === undefined ? 1 : schema.minimum + (schema.exclusiveMinimum === true ? 1 : 0);
  if (type === 'boolean') return false;
  if (text !== undefined) return text;
  if (schema.format === 'date-time') return new Date(Date.now() - 86_400_000).toISOString();
  if (/password/i.test(key)) return 'a-long-password-for-the-suite-1';
  return 'x'.repeat(Math.max(1, schema.minLength ?? 1));
}

/** Injection strings for every parameter (SQL, path, markup, header, format, NUL). */
export const INJECTIONS = [
  "1' OR '1'='1",
  '1; DROP TABLE samples; --',
  '../../../../etc/passwd',
  '<script>alert(1)</script>',
  '%00%0d%0aSet-Cookie: x=1',
  // biome-ignore lint/suspicious/noTemplateCurlyInString: the text itself is the injection string
  '${jndi:ldap://127.0.0.1/x}',
  '-1',
  '99999999999999999999',
  '{"$gt": ""}',
  '\u0000',
];
