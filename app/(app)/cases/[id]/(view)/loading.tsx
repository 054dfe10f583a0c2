// The detail page keeps a loading boundary of its own (the (view) group), so that a link's
// prefetch renders only up to here, while /cases/[id]/edit stays outside it (a real 403).
export { default } from '../../(list)/loading';
