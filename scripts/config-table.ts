// Prints the README's configuration table from CONFIG_VARIABLES, the one list loadConfig reads.
// Usage: node --conditions=source --import tsx scripts/config-table.ts
import { CONFIG_VARIABLES } from '@ausline/contracts';

export function configTableMarkdown(): string {
  const rows = CONFIG_VARIABLES.map((v) => {
    const dflt = v.required ? 'required' : v.defaultValue === undefined ? '(unset)' : v.defaultValue === '' ? '(empty)' : `\`${v.defaultValue}\``;
    return `| \`${v.name}\` | ${dflt} | ${v.description.replace(/\|/g, '\\|')} |`;
  });
  return ['| variable | default | what it sets |', '|---|---|---|', ...rows].join('\n');
}

if (import.meta.url === `file://${process.argv[1]}`) console.log(configTableMarkdown());
