import { json } from '@/lib/http';

/**
 * Any /api path no route serves: a JSON 404 like the API's other errors, for every method, instead
 * of the HTML not-found page (whose scripts the API's deny-all policy would block anyway).
 */
function notFound() {
  return json({ error: 'not_found', message: 'There is no such API route.' }, 404);
}

export { notFound as GET, notFound as POST, notFound as PUT, notFound as PATCH, notFound as DELETE };
