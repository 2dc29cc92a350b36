/**
 * The one way loaders and actions refuse: throw a Response whose text the root error boundary shows.
 * 404 is used for anything in another organisation, so that a slug or id says nothing about whether
 * it exists; 403 for what a member's role does not allow.
 */
export const NOT_FOUND_MESSAGE =
  "There is nothing at this address, or it belongs to an organisation you are not a member of.";

export function notFound(message: string = NOT_FOUND_MESSAGE): Response {
  return new Response(message, { status: 404, headers: { "Content-Type": "text/plain; charset=utf-8" } });
}

export function forbidden(message: string): Response {
  return new Response(message, { status: 403, headers: { "Content-Type": "text/plain; charset=utf-8" } });
}
