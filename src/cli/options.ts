import { Option } from 'commander';

export function formatOption(choices: readonly string[], fallback: string): Option {
  return new Option('--format <format>', 'output format').choices(choices).default(fallback);
}
