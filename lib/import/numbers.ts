/**
 * Numbers in a practice's file: decimal comma or decimal point, thousands separators, the
 * minus sign. Pure. A number is written back with a decimal point and no separator ("3.5").
 */

export type DecimalMark = '.' | ',';

export type NumberParse = { ok: true; value: number; text: string } | { ok: false; reason: string };

/**
 * Reads a written number under the chosen decimal mark. With a decimal comma, "." and spaces may
 * group thousands ("1.234,5"); with a decimal point, "," and spaces may ("1,234.5"). A value
 * that only makes sense under the other mark ("3,5" with a decimal point) is refused with why.
 */
export function parseNumber(text: string, mark: DecimalMark): NumberParse {
  const raw = text.trim();
  if (raw === '') return { ok: false, reason: 'The number is blank.' };
  let t = raw.replace(/^[\u2212\u2013]/, '-').replace(/[\u00a0\u202f ]/g, ' ');
  const group = mark === ',' ? '.' : ',';
  // Thousands groups: 1 234,5 / 1.234,5 / 1,234.5 — only in groups of three digits.
  const grouped = new RegExp(`^-?\\d{1,3}([ ${group === '.' ? '\\.' : ','}]\\d{3})+(${mark === ',' ? ',' : '\\.'}\\d+)?$`);
  if (grouped.test(t)) t = t.replace(new RegExp(`[ ${group === '.' ? '\\.' : ','}]`, 'g'), '');
  if (mark === ',') {
    if (/^-?\d*\.\d+$/.test(t) && !/^-?\d{1,3}(\.\d{3})+$/.test(t)) {
      return { ok: false, reason: `“${raw}” has a decimal point but the file is set to decimal comma.` };
    }
    t = t.replace(',', '.');
  } else if (/^-?\d*,\d+$/.test(t)) {
    return { ok: false, reason: `“${raw}” has a decimal comma but the file is set to decimal point.` };
  }
  if (/^-?(\d+\.?\d*|\.\d+)$/.test(t)) {
    const value = Number(t);
    return { ok: true, value, text: canonicalNumber(value) };
  }
  if (/^-?\d+([.,]\d+)?\s*[a-zµ]+$/i.test(raw)) return { ok: false, reason: `“${raw}”: write the number without the unit.` };
  return { ok: false, reason: `“${raw}” is not a number.` };
}

/** A number as the templates write it: decimal point, no exponent for everyday sizes. */
export function canonicalNumber(value: number): string {
  if (Number.isInteger(value)) return String(value);
  return String(Math.round(value * 1e9) / 1e9);
}

export interface DecimalMarkSuggestion {
  mark: DecimalMark | null;
  reason: string;
}

/** Suggests the decimal mark from written numbers: "3,5" → comma; "3.5" → point. */
export function suggestDecimalMark(values: Iterable<string>): DecimalMarkSuggestion {
  let comma = 0;
  let point = 0;
  let commaExample = '';
  let pointExample = '';
  for (const v of values) {
    const t = v.trim();
    // One separator followed by other than exactly three digits: a decimal mark for sure.
    if (/^-?\d+,(\d{1,2}|\d{4,})$/.test(t)) {
      comma++;
      commaExample ||= t;
    } else if (/^-?\d+\.(\d{1,2}|\d{4,})$/.test(t)) {
      point++;
      pointExample ||= t;
    }
  }
  if (comma > 0 && point === 0) return { mark: ',', reason: `${comma} number${comma === 1 ? '' : 's'} such as “${commaExample}” use a decimal comma.` };
  if (point > 0 && comma === 0) return { mark: '.', reason: `${point} number${point === 1 ? '' : 's'} such as “${pointExample}” use a decimal point.` };
  if (point > 0 && comma > 0) return { mark: null, reason: `The numbers mix “${commaExample}” (decimal comma) and “${pointExample}” (decimal point): choose one.` };
  return { mark: null, reason: 'No number with decimals was found.' };
}
