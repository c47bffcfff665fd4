import { describe, expect, it } from 'vitest';
import { readFormFields } from './responses.ts';

describe('readFormFields', () => {
  it('keeps field names the client chose as plain fields, "__proto__" included', async () => {
    const body = new URLSearchParams([
      ['__proto__', 'x'],
      ['constructor', 'y'],
      ['intent', 'save'],
    ]);
    const fields = await readFormFields(new Request('http://test/', { method: 'POST', body, headers: { 'content-type': 'application/x-www-form-urlencoded' } }));
    expect(Object.entries(fields)).toEqual([
      ['__proto__', 'x'],
      ['constructor', 'y'],
      ['intent', 'save'],
    ]);
    expect(Object.getPrototypeOf(fields)).toBe(Object.prototype);
  });
});
