import net from 'node:net';

/** A TCP port free on loopback now (the OS picks it; the caller binds it soon after). */
export async function freePort(): Promise<number> {
  const server = net.createServer();
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
  const port = (server.address() as net.AddressInfo).port;
  await new Promise((r) => server.close(r));
  return port;
}
