import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { readmeWithReference, schemaFileText, validatorModuleText } from '../../scripts/generate-docs.ts';

describe('generated documentation stays in step with the schema', () => {
  it('schema/recipe.schema.json equals the schema in src/recipe/schema.ts (run npm run docs)', () => {
    expect(readFileSync('schema/recipe.schema.json', 'utf8')).toBe(schemaFileText());
  });
  it("the README's recipe reference equals the one generated from the schema (run npm run docs)", () => {
    const readme = readFileSync('README.md', 'utf8');
    expect(readme).toBe(readmeWithReference(readme));
    expect(readme).toContain('`patch.minCoverage`');
  });
  it('the precompiled recipe validator is the one generated from the schema (run npm run docs)', () => {
    expect(readFileSync('src/recipe/validate-recipe.generated.ts', 'utf8')).toBe(validatorModuleText());
  });
  it('the package version and the code agree', async () => {
    const { VERSION } = await import('../../src/version.ts');
    expect(JSON.parse(readFileSync('package.json', 'utf8')).version).toBe(VERSION);
  });
});
