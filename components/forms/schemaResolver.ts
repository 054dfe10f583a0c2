import { zodResolver } from '@hookform/resolvers/zod';
import type { FieldValues, Resolver } from 'react-hook-form';
import type { z } from 'zod';

/**
 * The react-hook-form resolver for a form checked with the API's own zod schema. The form is
 * typed by its fields (`Shape`: what the inputs hold); the schemas often take `unknown` (they
 * preprocess), so zodResolver's own input type cannot name the fields. The submit handler gets
 * the schema's output, or with `raw` the fields as typed (validated, not transformed).
 * Use as `useForm<Shape, unknown, z.output<typeof Schema>>({ resolver: schemaResolver(Schema) })`.
 */
export function schemaResolver<Shape extends FieldValues, S extends z.ZodType>(schema: S): Resolver<Shape, unknown, z.output<S>>;
export function schemaResolver<Shape extends FieldValues, S extends z.ZodType>(schema: S, options: { raw: true }): Resolver<Shape, unknown, Shape>;
export function schemaResolver<Shape extends FieldValues, S extends z.ZodType>(schema: S, options?: { raw: true }) {
  // The one place the schema's input type is narrowed to the form's fields.
  const typed = schema as unknown as z.ZodType<z.output<S>, Shape>;
  return options?.raw ? zodResolver(typed, undefined, { raw: true }) : zodResolver(typed);
}
