/**
 * JSON Schema of the report's results.json (the --json envelope of src/output.ts plus the run's
 * start time and duration).
 *
 * Dialect: JSON Schema draft-07, the default dialect of ajv 8 (`new Ajv()`); definitions live
 * under "$defs" (ajv 8 accepts it in every dialect, and "#/$defs/…" is a plain JSON Pointer for
 * any other validator). No keyword is placed beside a "$ref", since draft-07 ignores siblings of
 * "$ref". Timestamps are checked with a pattern rather than "format", so validation does not
 * depend on a format plug-in; nullable values use anyOf rather than type arrays, so the schema
 * compiles under ajv's strict mode (`new Ajv({ strict: true })`).
 *
 * The inner structure of `results` is free, with one rule everywhere: an object that looks like
 * a quantity — it has both "value" and "unit", or it has "uncertainty" — must be a complete
 * quantity { value: number, uncertainty: number ≥ 0 | null, unit: string } (src/types.ts,
 * Quantity); extra keys (e.g. "converged", "reason") are allowed. The rule is applied through
 * "$defs/node", recursively, under every key of `results`; the top-level result keys we expect
 * (structure, diffusion, conductivity, viscosity, convergence, joins) are listed and optional.
 * "started", "durationSeconds" and "commandLine" (the full command line, written by the report) are
 * optional too, because envelope() in src/output.ts does not set them; when present they are
 * checked. Unknown top-level keys are refused.
 */

/** The schema's $id (a URN, so the schema names no network location). */
export const RESULTS_SCHEMA_ID = 'urn:sojourn:schema:results:1';

/** JSON Schema (draft-07) for results.json; see the module comment for the rules. */
export const resultsSchema = {
  $schema: 'http://json-schema.org/draft-07/schema#',
  $id: RESULTS_SCHEMA_ID,
  title: 'sojourn results.json',
  description: 'Output envelope of a sojourn run: tool, version, inputs, options, timing, results and warnings.',
  type: 'object',
  required: ['tool', 'version', 'command', 'inputs', 'options', 'results', 'warnings'],
  additionalProperties: false,
  properties: {
    tool: { const: 'sojourn' },
    version: { type: 'string', pattern: '^[0-9]+\\.[0-9]+\\.[0-9]+([-+][0-9A-Za-z.+-]*)?$' },
    command: { type: 'string', minLength: 1 },
    commandLine: {
      description: 'The full command line as given: program name, command and every argument.',
      type: 'array',
      items: { type: 'string' },
    },
    inputs: { type: 'array', items: { $ref: '#/$defs/input' } },
    options: { type: 'object' },
    started: {
      description: 'Start of the run, ISO 8601 date-time with offset or Z (RFC 3339 §5.6).',
      type: 'string',
      pattern: '^[0-9]{4}-[0-9]{2}-[0-9]{2}T[0-9]{2}:[0-9]{2}:[0-9]{2}(\\.[0-9]+)?(Z|[+-][0-9]{2}:[0-9]{2})$',
    },
    durationSeconds: { type: 'number', minimum: 0 },
    results: {
      type: 'object',
      properties: {
        structure: { $ref: '#/$defs/resultGroup' },
        diffusion: { $ref: '#/$defs/resultGroup' },
        conductivity: { $ref: '#/$defs/resultGroup' },
        viscosity: { $ref: '#/$defs/resultGroup' },
        convergence: { $ref: '#/$defs/resultGroup' },
        joins: { $ref: '#/$defs/resultGroup' },
      },
      additionalProperties: { $ref: '#/$defs/node' },
    },
    warnings: { type: 'array', items: { type: 'string' } },
  },
  $defs: {
    input: {
      type: 'object',
      required: ['path', 'sha256', 'bytes', 'format', 'frames'],
      additionalProperties: false,
      properties: {
        path: { type: 'string', minLength: 1 },
        sha256: { description: 'SHA-256 of the file as stored (FIPS 180-4), lower-case hex.', type: 'string', pattern: '^[0-9a-f]{64}$' },
        bytes: { type: 'integer', minimum: 0 },
        format: { type: 'string', minLength: 1 },
        frames: { anyOf: [{ type: 'integer', minimum: 0 }, { type: 'null' }] },
        atomKinds: {
          description: 'Trajectories: per atom label, the element and mass (g/mol) used and where each came from.',
          type: 'array',
          items: {
            type: 'object',
            required: ['label', 'atoms', 'element', 'mass', 'from', 'elementFrom'],
            properties: {
              label: { type: 'string' },
              atoms: { type: 'integer', minimum: 1 },
              element: { type: 'string' },
              mass: { anyOf: [{ type: 'number', minimum: 0 }, { type: 'null' }] },
              from: { type: 'string' },
              elementFrom: { type: 'string' },
              readings: { type: 'array', items: { type: 'string' } },
            },
          },
        },
        fileUnits: {
          description: 'The units the numbers of the file were read in, and where each came from (the file, an option, or assumed).',
          type: 'object',
          additionalProperties: {
            type: 'object',
            required: ['unit', 'from'],
            properties: { unit: { type: 'string' }, from: { type: 'string' } },
          },
        },
      },
    },
    quantity: {
      description: 'A number with its one-standard-error uncertainty (null when unknown) and its unit.',
      type: 'object',
      required: ['value', 'uncertainty', 'unit'],
      properties: {
        value: { type: 'number' },
        uncertainty: { anyOf: [{ type: 'number', minimum: 0 }, { type: 'null' }] },
        unit: { type: 'string' },
      },
    },
    resultGroup: {
      description: 'One analysis result: an object or an array, inner structure free, quantities checked.',
      anyOf: [{ $ref: '#/$defs/objectNode' }, { $ref: '#/$defs/arrayNode' }],
    },
    node: {
      description: 'Any JSON value; objects that look like quantities must be quantities; applied recursively.',
      anyOf: [
        { $ref: '#/$defs/objectNode' },
        { $ref: '#/$defs/arrayNode' },
        { type: 'string' },
        { type: 'number' },
        { type: 'boolean' },
        { type: 'null' },
      ],
    },
    objectNode: {
      type: 'object',
      // "properties: true" entries only declare the names, for ajv's strict "required" check.
      if: {
        anyOf: [
          { required: ['value', 'unit'], properties: { value: true, unit: true } },
          { required: ['uncertainty'], properties: { uncertainty: true } },
        ],
      },
      then: { $ref: '#/$defs/quantity' },
      additionalProperties: { $ref: '#/$defs/node' },
    },
    arrayNode: {
      type: 'array',
      items: { $ref: '#/$defs/node' },
    },
  },
} as const;
