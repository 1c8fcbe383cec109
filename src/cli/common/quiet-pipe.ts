/**
 * A reader that closes stdout early (`crystallog analyze … | head`) is not a fault: on EPIPE stop
 * quietly with exit 0 instead of Node's unhandled-error stack trace. Other stdout errors still surface.
 */
export function endQuietlyOnClosedStdout(stream: NodeJS.WriteStream = process.stdout): void {
  stream.on('error', (err: NodeJS.ErrnoException) => {
    if (err.code !== 'EPIPE') throw err;
    process.exit(0);
  });
}
