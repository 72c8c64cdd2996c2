/** Working the Book screen's calendar in a browser test: going to a day, and dragging down a day column to book. */
import type { Page } from 'playwright-core';
import { settled } from './browser';

/** With the calendar shown, goes to `day` (YYYY-MM-DD) through "Go to date" and waits until its column is loaded. */
export async function goToDay(page: Page, day: string): Promise<void> {
  await page.locator('.fc-timegrid-slot-lane').first().waitFor();
  await page.getByLabel('Go to date').fill(day);
  await page.locator(`td.fc-timegrid-col[data-date="${day}"]`).waitFor();
  await settled(page);
}

/** Drags down one day column from `from` to the slot that starts at `lastSlot` (HH:MM:SS). */
export async function dragSelect(page: Page, day: string, from: string, lastSlot: string): Promise<void> {
  // the range in the middle of the viewport: a drag near its edge would make the calendar scroll on its own
  await page.locator(`td.fc-timegrid-slot-lane[data-time="${from}"]`).evaluate((el) => el.scrollIntoView({ block: 'center' }));
  const col = (await page.locator(`td.fc-timegrid-col[data-date="${day}"]`).boundingBox())!;
  const top = (await page.locator(`td.fc-timegrid-slot-lane[data-time="${from}"]`).boundingBox())!;
  const bottom = (await page.locator(`td.fc-timegrid-slot-lane[data-time="${lastSlot}"]`).boundingBox())!;
  const x = col.x + col.width / 2;
  await page.mouse.move(x, top.y + top.height / 2);
  await page.mouse.down();
  await page.mouse.move(x, (top.y + bottom.y) / 2 + 4, { steps: 5 });
  await page.mouse.move(x, bottom.y + bottom.height / 2, { steps: 5 });
  await page.mouse.up();
}
