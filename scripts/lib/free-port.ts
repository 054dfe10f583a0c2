import net from 'node:net';

/**
 * A TCP port free on loopback now, for a server the caller starts soon after. It is taken from
 * 28000–31999, below the kernel's ephemeral ports (Linux: 32768 and up): a port the OS hands out
 * for `listen(0)` can be taken by any outgoing connection before the server binds it (seen as
 * EADDRINUSE). The start is random so two scripts picking at once rarely try the same ports; the
 * shell scripts' fixed bases (scripts/lib/services.sh) lie below this range.
 */
export async function freePort(): Promise<number> {
  const start = 28000 + Math.floor(Math.random() * 3000);
  for (let port = start; port < start + 1000; port++) {
    if (await canListen(port)) return port;
  }
  throw new Error(`no free port on 127.0.0.1 from ${start} to ${start + 999}`);
}

function canListen(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const server = net.createServer();
    server.once('error', () => resolve(false));
    server.listen(port, '127.0.0.1', () => server.close(() => resolve(true)));
  });
}
