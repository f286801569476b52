/** The desktop menu: a pure template builder (tested without Electron) plus its keyboard shortcuts. */
import type { MenuItemConstructorOptions } from 'electron';
import type { MenuCommand } from '../contract';

export interface MenuActions {
  command(c: MenuCommand): void;
  openRecent(path: string): void;
  clearRecent(): void;
  quit(): void;
}

export function buildMenuTemplate(
  recent: string[],
  actions: MenuActions,
  platform = process.platform,
): MenuItemConstructorOptions[] {
  const cmd = (label: string, c: MenuCommand, accelerator?: string): MenuItemConstructorOptions => ({
    label,
    accelerator,
    click: () => actions.command(c),
  });
  const recentItems: MenuItemConstructorOptions[] = recent.length
    ? [
        ...recent.map((p) => ({ label: p, click: () => actions.openRecent(p) })),
        { type: 'separator' },
        { label: 'Clear list', click: () => actions.clearRecent() },
      ]
    : [{ label: 'No recent scans', enabled: false }];
  return [
    {
      label: '&Scan',
      submenu: [
        cmd('Open scan…', 'open', 'CmdOrCtrl+O'),
        cmd('Choose folder for batch…', 'open-folder', 'CmdOrCtrl+Shift+O'),
        { label: 'Recent scans', submenu: recentItems },
        { type: 'separator' },
        cmd('Save…', 'save', 'CmdOrCtrl+S'),
        { type: 'separator' },
        {
          label: platform === 'darwin' ? 'Quit Rankfold' : 'Quit',
          accelerator: 'CmdOrCtrl+Q',
          click: () => actions.quit(),
        },
      ],
    },
    {
      label: '&Compare',
      submenu: [
        cmd('Side by side', 'view-side', 'CmdOrCtrl+1'),
        cmd('Swipe', 'view-swipe', 'CmdOrCtrl+2'),
        cmd('Difference', 'view-diff', 'CmdOrCtrl+3'),
        cmd('One layer', 'view-layer', 'CmdOrCtrl+4'),
        cmd('Tile ranks', 'view-tiles', 'CmdOrCtrl+5'),
        { type: 'separator' },
        cmd('Fit to window', 'zoom-fit', 'CmdOrCtrl+0'),
        cmd('Actual pixels (1:1)', 'zoom-1', 'CmdOrCtrl+Alt+1'),
        cmd('Zoom in', 'zoom-in', 'CmdOrCtrl+Plus'),
        cmd('Zoom out', 'zoom-out', 'CmdOrCtrl+-'),
      ],
    },
    { label: '&Edit', submenu: [{ role: 'copy' }, { role: 'paste' }, { role: 'selectAll' }] },
  ];
}
