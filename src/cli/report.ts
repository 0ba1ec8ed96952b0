/** `kerneldx report DIR`: DIR/findings.json (+ kernel) → DIR/dossier.html and DIR/dossier.pdf. */
import type { Register } from './commands.js';

export const registerReport: Register = (program, io) => {
  program.command('report <dir>')
    .description('Build the dossier (dossier.html and dossier.pdf) in DIR from DIR/findings.json and the kernel folder it names (default DIR/kernel/).')
    .option('--quiet', 'no progress on stderr')
    .option('--json', 'print the paths written as JSON on stdout')
    .action(async (dir: string, o: { quiet?: boolean; json?: boolean }) => {
      const { buildDossier } = await import('../report/index.js'); // loaded only for this command
      const r = await buildDossier(dir, { quiet: !!o.quiet, argv: process.argv.slice(2) });
      io.stdout(o.json ? JSON.stringify({ html: r.html, pdf: r.pdf }) + '\n' : `${r.html}\n${r.pdf}\n`);
    });
};
