// The lookup behind the page's typed element binding (src-renderer/bind.ts), with a fake root.
import { describe, expect, it } from 'vitest';
import { resolveAll } from '../../src-renderer/elements';

const page = new Map<string, { id: string }>([
  ['input#rank', { id: 'rank' }],
  ['#stage', { id: 'stage' }],
]);
const query = (s: string) => page.get(s) ?? null;

describe('resolveAll', () => {
  it('returns one element per named selector', () => {
    const el = resolveAll(query, { rank: 'input#rank', stage: '#stage' });
    expect(el.rank.id).toBe('rank');
    expect(el.stage.id).toBe('stage');
    expect(Object.keys(el)).toEqual(['rank', 'stage']);
  });

  it('throws one error naming every selector that matched nothing', () => {
    expect(() =>
      resolveAll(query, { rank: 'input#rank', budget: 'input#budget', tile: 'select#tile' }),
    ).toThrow(new Error('The page has no element for budget (input#budget), tile (select#tile)'));
  });

  it('names the root it searched', () => {
    expect(() => resolveAll(query, { dd: 'dd' }, 'The psnr readout')).toThrow(
      'The psnr readout has no element for dd (dd)',
    );
  });
});
