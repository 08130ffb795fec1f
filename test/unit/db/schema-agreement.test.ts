// Proves prisma/schema.prisma and prisma/migrations describe the same database: a database
// migrated by our runner (server/db/migrate.ts) is read back through information_schema and
// pg_catalog and compared with the models parsed from schema.prisma, in both directions:
// tables, columns, column types, nullability, defaults, enum values, indexes and foreign keys.
// (`prisma migrate diff` needs the native schema engine, which these machines cannot fetch.)
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { createTestApp, describeEngines, type TestApp } from '../../helpers/test-app.ts';

interface Field {
  name: string;
  type: string;
  optional: boolean;
  list: boolean;
  attributes: string;
}
interface Model {
  name: string;
  fields: Field[];
  blockAttributes: string[];
}

const schemaText = readFileSync(join(import.meta.dirname, '..', '..', '..', 'prisma', 'schema.prisma'), 'utf8');

function parseSchema(text: string) {
  const clean = text.replace(/\/\/.*$/gm, '');
  const enums = new Map<string, string[]>();
  // Blocks end at a line holding only "}" (values such as @default("{}") contain braces).
  for (const match of clean.matchAll(/^enum\s+(\w+)\s*\{\n([\s\S]*?)^\}/gm)) {
    const values = match[2]
      .split('\n')
      .map((line) => line.trim())
      .filter(Boolean)
      .map((line) => /@map\("([^"]+)"\)/.exec(line)?.[1] ?? line.split(/\s+/)[0]);
    enums.set(match[1], values);
  }
  const models: Model[] = [];
  for (const match of clean.matchAll(/^model\s+(\w+)\s*\{\n([\s\S]*?)^\}/gm)) {
    const fields: Field[] = [];
    const blockAttributes: string[] = [];
    for (const raw of match[2].split('\n')) {
      const line = raw.trim();
      if (!line) continue;
      if (line.startsWith('@@')) {
        blockAttributes.push(line);
        continue;
      }
      const parts = /^(\w+)\s+(\w+)(\[\])?(\?)?\s*(.*)$/.exec(line);
      if (!parts) throw new Error(`cannot parse field line: ${line}`);
      fields.push({ name: parts[1], type: parts[2], list: Boolean(parts[3]), optional: Boolean(parts[4]), attributes: parts[5] });
    }
    models.push({ name: match[1], fields, blockAttributes });
  }
  return { enums, models };
}

const { enums, models } = parseSchema(schemaText);
const modelNames = new Set(models.map((model) => model.name));
const scalarTypes: Record<string, string> = {
  String: 'text',
  Int: 'integer',
  Float: 'double precision',
  Boolean: 'boolean',
  DateTime: 'timestamp without time zone',
  Json: 'jsonb',
  BigInt: 'bigint',
  Bytes: 'bytea',
};

function columnsOf(model: Model) {
  return model.fields.filter((field) => !modelNames.has(field.type));
}
function relationsOf(model: Model) {
  return model.fields.filter((field) => modelNames.has(field.type) && /@relation\(/.test(field.attributes) && /fields:/.test(field.attributes));
}
function fieldList(attribute: string): string[] {
  return (/\[([^\]]*)\]/.exec(attribute)?.[1] ?? '').split(',').map((name) => name.trim()).filter(Boolean);
}

describeEngines('schema.prisma agrees with the migrated database', (engine) => {
  let t: TestApp;
  beforeAll(async () => {
    t = await createTestApp(engine);
  });
  afterAll(async () => t?.close());

  it('the parser found every model and enum (guards the check itself)', () => {
    expect(models.length).toBeGreaterThanOrEqual(15);
    for (const name of ['Team', 'User', 'ApiToken', 'Plan', 'Site', 'Gateway', 'Node', 'AntennaDesign', 'FeedlineType', 'MastOption', 'TerrainLayer', 'Link', 'CoverageRun', 'FieldReading', 'AuditEntry']) expect(modelNames.has(name), name).toBe(true);
    expect(enums.get('InstallStatus')).toEqual(['planned', 'installed', 'needs-visit']);
    expect(columnsOf(models.find((m) => m.name === 'Node')!).length).toBeGreaterThan(20);
  });

  it('same tables, both directions', async () => {
    const rows = await t.db.raw.query<{ table_name: string }>(
      "SELECT table_name FROM information_schema.tables WHERE table_schema = 'public' AND table_type = 'BASE TABLE' AND table_name <> '_earshot_migrations'",
    );
    expect(rows.map((row) => row.table_name).sort()).toEqual([...modelNames].sort());
  });

  it('same columns with the same types, nullability and defaults, both directions', async () => {
    const rows = await t.db.raw.query<{ table_name: string; column_name: string; data_type: string; udt_name: string; is_nullable: string; column_default: string | null; datetime_precision: number | null }>(
      "SELECT table_name, column_name, data_type, udt_name, is_nullable, column_default, datetime_precision FROM information_schema.columns WHERE table_schema = 'public' AND table_name <> '_earshot_migrations'",
    );
    const database = new Map(rows.map((row) => [`${row.table_name}.${row.column_name}`, row]));
    const expected = new Set<string>();
    for (const model of models) {
      for (const field of columnsOf(model)) {
        const key = `${model.name}.${field.name}`;
        expected.add(key);
        const column = database.get(key);
        expect(column, `${key} is missing from the migrations`).toBeDefined();
        if (!column) continue;
        if (enums.has(field.type)) {
          expect(column.data_type, key).toBe('USER-DEFINED');
          expect(column.udt_name, key).toBe(field.type);
        } else {
          expect(column.data_type, key).toBe(scalarTypes[field.type]);
          if (field.type === 'DateTime') expect(column.datetime_precision, key).toBe(3);
        }
        expect(column.is_nullable, `${key} nullability`).toBe(field.optional ? 'YES' : 'NO');
        const clientDefault = /@default\((cuid|uuid)\(\)\)/.test(field.attributes);
        const databaseDefault = /@default\(/.test(field.attributes) && !clientDefault;
        expect(column.column_default !== null, `${key} default`).toBe(databaseDefault);
        const literal = /@default\("([^"]*)"\)/.exec(field.attributes)?.[1] ?? /@default\((-?[\d.]+|true|false)\)/.exec(field.attributes)?.[1];
        if (literal !== undefined && column.column_default !== null) expect(column.column_default, `${key} default value`).toContain(literal);
      }
    }
    const extra = [...database.keys()].filter((key) => !expected.has(key));
    expect(extra, 'columns in the migrations but not in schema.prisma').toEqual([]);
  });

  it('same enum types and values', async () => {
    const rows = await t.db.raw.query<{ typname: string; enumlabel: string }>(
      'SELECT t.typname, e.enumlabel FROM pg_type t JOIN pg_enum e ON e.enumtypid = t.oid ORDER BY t.typname, e.enumsortorder',
    );
    const database = new Map<string, string[]>();
    for (const row of rows) database.set(row.typname, [...(database.get(row.typname) ?? []), row.enumlabel]);
    expect(Object.fromEntries(database)).toEqual(Object.fromEntries(enums));
  });

  it('same indexes (unique and plain), both directions', async () => {
    const rows = await t.db.raw.query<{ indexname: string; indexdef: string }>(
      "SELECT indexname, indexdef FROM pg_indexes WHERE schemaname = 'public' AND tablename <> '_earshot_migrations' AND indexname NOT LIKE '%\\_pkey'",
    );
    const expected: string[] = [];
    for (const model of models) {
      for (const field of model.fields) if (/@unique\b/.test(field.attributes)) expected.push(`${model.name}_${field.name}_key UNIQUE`);
      for (const attribute of model.blockAttributes) {
        if (attribute.startsWith('@@unique')) expected.push(`${model.name}_${fieldList(attribute).join('_')}_key UNIQUE`);
        if (attribute.startsWith('@@index')) expected.push(`${model.name}_${fieldList(attribute).join('_')}_idx`);
      }
    }
    const actual = rows.map((row) => `${row.indexname}${/CREATE UNIQUE/.test(row.indexdef) ? ' UNIQUE' : ''}`);
    expect(actual.sort()).toEqual(expected.sort());
  });

  it('same foreign keys with the same delete rules, both directions', async () => {
    const rows = await t.db.raw.query<{ constraint_name: string; delete_rule: string }>(
      "SELECT constraint_name, delete_rule FROM information_schema.referential_constraints WHERE constraint_schema = 'public'",
    );
    const rules: Record<string, string> = { Cascade: 'CASCADE', SetNull: 'SET NULL', Restrict: 'RESTRICT', NoAction: 'NO ACTION' };
    const expected: string[] = [];
    for (const model of models) {
      for (const relation of relationsOf(model)) {
        const fields = fieldList(/fields:\s*(\[[^\]]*\])/.exec(relation.attributes)?.[1] ?? '');
        const onDelete = /onDelete:\s*(\w+)/.exec(relation.attributes)?.[1] ?? (relation.optional ? 'SetNull' : 'Restrict');
        expected.push(`${model.name}_${fields.join('_')}_fkey ${rules[onDelete]}`);
      }
    }
    expect(rows.map((row) => `${row.constraint_name} ${row.delete_rule}`).sort()).toEqual(expected.sort());
  });
});
