/**
 * A large readings file for the import tests and the bench: line i holds t = i / 10 s and a
 * 16 MHz reading with a small repeating wobble, written the way a logger would.
 */
export function millionRowFile(rows: number): string {
  const parts: string[] = new Array(rows + 1);
  parts[0] = 'time_s,frequency_Hz';
  for (let i = 0; i < rows; i++)
    parts[i + 1] = `${i / 10},${16000000 + ((i * 7919) % 1000) * 1e-5}`;
  return parts.join('\n') + '\n';
}
