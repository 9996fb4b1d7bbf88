/**
 * Arrow-key movement inside a group of controls with one tab stop (the roving-tabindex pattern of
 * the WAI-ARIA authoring practices): Left/Up and Right/Down move to the previous or next item,
 * Home and End to the first and last; only the current item is in the tab order.
 */

/** The index an arrow key moves to from `current` among `count` items, or null for other keys. */
export function arrowTarget(key: string, current: number, count: number): number | null {
  if (count === 0) return null;
  switch (key) {
    case 'ArrowLeft':
    case 'ArrowUp':
      return (current - 1 + count) % count;
    case 'ArrowRight':
    case 'ArrowDown':
      return (current + 1) % count;
    case 'Home':
      return 0;
    case 'End':
      return count - 1;
    default:
      return null;
  }
}

/**
 * Makes `items` one tab stop: the item at `selected` gets `tabindex=0`, the others −1; arrow keys
 * move the focus and call `onMove` with the new index (the caller selects or just focuses).
 */
export function rovingFocus(container: HTMLElement, items: readonly HTMLElement[], selected: number, onMove: (index: number) => void): void {
  items.forEach((item, i) => (item.tabIndex = i === selected ? 0 : -1));
  container.onkeydown = (event: KeyboardEvent) => {
    const current = items.findIndex(item => item === document.activeElement);
    const target = arrowTarget(event.key, current < 0 ? selected : current, items.length);
    if (target === null) return;
    event.preventDefault();
    event.stopPropagation();
    items.forEach((item, i) => (item.tabIndex = i === target ? 0 : -1));
    items[target].focus();
    onMove(target);
  };
}
