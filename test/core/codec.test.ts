/** The record codec: JSON whose binary fields travel as raw bytes, found again by their paths. */
import { describe, expect, it } from 'vitest';
import { BytesWriter, SHARED_ENTRY_BYTES, bytesOf, decodeRecord, encodeRecord, float64Bytes, float64sOf, packEntry, placeEntry, unpackEntry } from '../../core/codec.js';
import { parseJson } from '../../core/dict.js';

describe('records', () => {
  it('give back every binary field at its place, with keys from the data that look like anything', () => {
    const value = parseJson(
      JSON.stringify({ model: 'm', ranges: { __proto__x: { min: 1, max: 2 }, $blob: 3 }, folds: [{ k: 0 }, { k: 1 }], list: [1, 2, 3] }),
    ) as Record<string, unknown>;
    value.bytes = Uint8Array.of(1, 2, 3);
    (value.folds as Record<string, unknown>[])[1].bytes = Uint8Array.of(9);
    (value.ranges as Record<string, unknown>)['__proto__'] = Uint8Array.of(7, 7);
    const back = decodeRecord(encodeRecord(value)) as Record<string, unknown>;
    expect(back.bytes).toEqual(Uint8Array.of(1, 2, 3));
    expect((back.folds as Record<string, unknown>[])[1].bytes).toEqual(Uint8Array.of(9));
    expect((back.folds as Record<string, unknown>[])[0]).toEqual({ k: 0 });
    expect(Object.getOwnPropertyDescriptor(back.ranges, '__proto__')?.value).toEqual(Uint8Array.of(7, 7));
    expect((back.ranges as Record<string, unknown>).$blob).toBe(3);
    expect(back.list).toEqual([1, 2, 3]);
  });

  it('give a field that is most of the record as a view of it, and a small one as a copy', () => {
    const body = encodeRecord({ model: 'm', bytes: new Uint8Array(1000).fill(3), small: Uint8Array.of(4) });
    const back = decodeRecord(body) as { bytes: Uint8Array; small: Uint8Array };
    expect(back.bytes.buffer).toBe(body.buffer);
    expect(back.small.buffer).not.toBe(body.buffer);
    expect([back.bytes.length, back.bytes[999], Array.from(back.small)]).toEqual([1000, 3, [4]]);
  });

  it('start the first binary field, and an entry its body, at a multiple of 8 bytes, whatever the texts before them', () => {
    // so a fitted forest's f64 and i32 arrays can be views of the entry (models/serialize.ts)
    for (let n = 0; n < 9; n++) {
      const warnings = [{ code: 'w', message: 'é'.repeat(n), count: 1 }];
      const payload = packEntry('record', { name: 'x'.repeat(n), model: new Uint8Array(4096).fill(2) }, warnings);
      const entry = unpackEntry('record', payload);
      expect(entry.body.byteOffset % 8).toBe(0);
      const model = (entry.output as { model: Uint8Array }).model;
      expect(model.buffer).toBe(payload.buffer);
      expect(model.byteOffset % 8).toBe(0);
      expect(entry.stepWarnings).toEqual(warnings);
    }
  });

  it('write a writer field into the record exactly as the array it makes would be copied there', () => {
    const array = Uint8Array.from({ length: 300 }, (_, i) => (i * 7) % 256);
    const writer = new BytesWriter(array.length, (into) => into.set(array));
    const value = { name: 'm', folds: [{ bytes: Uint8Array.of(1, 2) }], bytes: writer };
    const fromArray = packEntry('record', { ...value, bytes: array }, []);
    expect(Buffer.from(packEntry('record', value, [])).equals(fromArray)).toBe(true);
    expect(Buffer.from(encodeRecord(value)).equals(encodeRecord({ ...value, bytes: array }))).toBe(true);
    const back = unpackEntry('record', fromArray).output as { bytes: Uint8Array };
    expect(back.bytes).toEqual(array);
    expect([bytesOf(writer), bytesOf(array)]).toEqual([array, array]);
  });

  it('carry numbers as a binary field, read back as a view where aligned and as a copy elsewhere', () => {
    const numbers = Float64Array.of(1.5, -0, Number.MIN_VALUE, 1e300, Math.PI);
    const back = unpackEntry('record', packEntry('record', { numbers: float64Bytes(numbers), rest: Uint8Array.of(1, 2, 3) }, [])).output as { numbers: Uint8Array };
    expect(Object.is(float64sOf(back.numbers)[1], -0)).toBe(true);
    expect(Array.from(float64sOf(back.numbers))).toEqual(Array.from(numbers));
    const shifted = new Uint8Array(41);
    shifted.set(float64Bytes(numbers), 1);
    const unaligned = float64sOf(shifted.subarray(1));
    expect(Array.from(unaligned)).toEqual(Array.from(numbers));
    const aligned = float64Bytes(numbers);
    expect(float64sOf(aligned).buffer).toBe(numbers.buffer);
    expect(() => float64sOf(new Uint8Array(12))).toThrow('12 bytes are not a whole number of 8-byte numbers');
  });

  it('make a large entry in shared memory, which placing for reading keeps as it is', () => {
    const big = packEntry('record', { model: new Uint8Array(SHARED_ENTRY_BYTES) }, []);
    expect(big.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(placeEntry(big)).toBe(big);
    const bytes = packEntry('bytes', new Uint8Array(SHARED_ENTRY_BYTES), []);
    expect(bytes.buffer).toBeInstanceOf(SharedArrayBuffer);
    const small = packEntry('record', { model: new Uint8Array(100) }, []);
    expect(small.buffer).not.toBeInstanceOf(SharedArrayBuffer);
    expect(placeEntry(small)).toBe(small);
  });

  it('pass through a cache entry unchanged', () => {
    const entry = unpackEntry('record', packEntry('record', { a: 1, b: Uint8Array.of(5, 6) }, [{ code: 'w', message: 'm', count: 1 }]));
    expect(entry.output).toEqual({ a: 1, b: Uint8Array.of(5, 6) });
    expect(entry.stepWarnings).toEqual([{ code: 'w', message: 'm', count: 1 }]);
  });

  it('refuse bytes that do not add up: cut short, or with more after the fields', () => {
    const body = encodeRecord({ a: Uint8Array.of(1, 2, 3, 4) });
    expect(() => decodeRecord(body.subarray(0, body.length - 2))).toThrow("the record's binary fields claim more bytes than are stored");
    const longer = new Uint8Array(body.length + 1);
    longer.set(body);
    expect(() => decodeRecord(longer)).toThrow('the record holds 1 bytes more than its fields');
    expect(() => decodeRecord(body.subarray(0, 3))).toThrow("the record's JSON claims");
  });
});
