/**
 * Our own palette for checkpoint states. Every state also has an icon and a word, so none is
 * told by color alone. Text (fg) on its background meets WCAG 2.1 AA (4.5:1, checked in
 * tests/unit/study-format.test.ts); overdue is the one solid, strong fill so it stands out.
 */
import type { ShownState } from '@/format/checkpoint';

export interface StateStyle {
  /** Text and icon color. */
  fg: string;
  /** Fill behind the text. */
  bg: string;
  /** Outline; dashed for cancelled. */
  border: string;
  borderStyle: 'solid' | 'dashed';
  /** Icon name in StudyIcon. */
  icon: string;
}

export const STATE_STYLES: Readonly<Record<ShownState, StateStyle>> = {
  overdue: { fg: '#ffffff', bg: '#b42318', border: '#b42318', borderStyle: 'solid', icon: 'overdue' },
  due: { fg: '#6f4300', bg: '#fff1cc', border: '#b97f00', borderStyle: 'solid', icon: 'due' },
  upcoming: { fg: '#3f4a5a', bg: '#eef1f5', border: '#8d97a6', borderStyle: 'solid', icon: 'upcoming' },
  done: { fg: '#17613a', bg: '#e2f3e8', border: '#3f8f5f', borderStyle: 'solid', icon: 'done' },
  missed: { fg: '#672a68', bg: '#f4e7f4', border: '#9e5f9f', borderStyle: 'solid', icon: 'missed' },
  cancelled: { fg: '#545d69', bg: '#ffffff', border: '#8d97a6', borderStyle: 'dashed', icon: 'cancelled' },
};

/** Inline CSS variables for one state (used by badges and grid cells). */
export function stateVars(state: ShownState): Record<string, string> {
  const s = STATE_STYLES[state];
  return { '--st-fg': s.fg, '--st-bg': s.bg, '--st-border': s.border, '--st-border-style': s.borderStyle };
}
