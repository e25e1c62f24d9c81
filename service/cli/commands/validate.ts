import { loadConfig } from '../../config/load.js';
import { ConfigError, formatProblem } from '../../config/problems.js';
import { EXIT } from '../exit-codes.js';

export function validateCommand(dir: string, options: { strict?: boolean; json?: boolean }): number {
  try {
    const config = loadConfig(dir);
    if (options.json) {
      console.log(JSON.stringify({ ok: true, flows: config.flows.map((f) => f.config.flow), problems: config.warnings }, null, 2));
    } else {
      for (const warning of config.warnings) console.log(formatProblem(warning));
      console.log(`${dir}: valid (${config.flows.length} flow${config.flows.length === 1 ? '' : 's'}: ${config.flows.map((f) => f.config.flow).join(', ')})${config.warnings.length ? `, ${config.warnings.length} warning(s)` : ''}`);
    }
    return options.strict && config.warnings.length > 0 ? EXIT.warnings : EXIT.ok;
  } catch (error) {
    if (!(error instanceof ConfigError)) throw error;
    if (options.json) console.log(JSON.stringify({ ok: false, problems: error.problems }, null, 2));
    else {
      for (const problem of error.problems) console.error(formatProblem(problem));
      const errors = error.problems.filter((p) => p.severity === 'error').length;
      console.error(`${dir}: ${errors} error(s)`);
    }
    return EXIT.config;
  }
}
