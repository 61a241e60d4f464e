/**
 * The cell grammar of a worksheet part (ECMA-376 Part 1, §18.3.1: `sheetData`, `row`, `c`, `v`, `f`,
 * `is`, `t`, `rPh`) as XML events, once for both readers of XLSX: the worklist reader (read/xlsx.ts)
 * and verify's reader of a stored workbook (verify/read.ts). Each keeps what it needs of a row and a
 * cell in its own startRow, startCell, endRow and endCell; this class only follows the elements:
 * a cell's `<v>` text, its inline string (phonetic runs left out), its formula and shared-formula group.
 */
export abstract class SheetCellEvents {
  protected inSheetData = false;
  protected inCell = false;
  /** The `<c>` attributes of the cell being read: `r`, `t` (default n), `s` (default 0). */
  protected cellRef: string | undefined;
  protected cellType = 'n';
  protected cellStyle = 0;
  /** `<v>` text, the inline string's text and the `<f>` text of the cell being read (null: none). */
  protected value: string | null = null;
  protected inlineText: string | null = null;
  protected formula: string | null = null;
  /** A `<f t="shared">`'s group index and, on the cell that states the group, its range. */
  protected sharedFormula: { si: string; ref?: string } | undefined;
  /** Where text goes: 0 nowhere, 1 `<v>`, 2 an inline string's `<t>`, 3 `<f>`. */
  private capture = 0;
  private phonetic = 0;
  private inInline = false;

  open(name: string, a: Record<string, string>, selfClosing: boolean): void {
    if (!this.inSheetData) {
      if (name === 'sheetData') this.inSheetData = !selfClosing;
      else this.beforeSheetData(name, a);
      return;
    }
    switch (name) {
      case 'row':
        this.startRow(a.r);
        if (selfClosing) this.endRow();
        break;
      case 'c':
        this.inCell = true;
        this.cellRef = a.r;
        this.cellType = a.t ?? 'n';
        this.cellStyle = a.s === undefined ? 0 : Number(a.s);
        this.value = null;
        this.inlineText = null;
        this.formula = null;
        this.sharedFormula = undefined;
        this.startCell();
        if (selfClosing) this.closeCell();
        break;
      case 'v':
        if (this.inCell) {
          this.value = '';
          this.capture = selfClosing ? 0 : 1;
        }
        break;
      case 'f':
        if (this.inCell) {
          this.formula = '';
          if (a.t === 'shared' && a.si !== undefined) this.sharedFormula = { si: a.si, ref: a.ref };
          this.capture = selfClosing ? 0 : 3;
        }
        break;
      case 'is':
        if (this.inCell) {
          this.inInline = !selfClosing;
          this.inlineText = '';
        }
        break;
      case 'rPh':
        if (!selfClosing) this.phonetic++;
        break;
      case 't':
        if (this.inInline && this.phonetic === 0 && !selfClosing) this.capture = 2;
        break;
    }
  }

  close(name: string): void {
    if (!this.inSheetData) return;
    switch (name) {
      case 'sheetData':
        this.inSheetData = false;
        break;
      case 'row':
        this.endRow();
        break;
      case 'c':
        this.closeCell();
        break;
      case 'v':
      case 'f':
      case 't':
        this.capture = 0;
        break;
      case 'is':
        this.inInline = false;
        break;
      case 'rPh':
        this.phonetic--;
        break;
    }
  }

  text(text: string): void {
    if (this.capture === 1) this.value += text;
    else if (this.capture === 2) this.inlineText += text;
    else if (this.capture === 3) this.formula += text;
  }

  private closeCell(): void {
    if (!this.inCell) return;
    this.inCell = false;
    this.capture = 0;
    this.endCell();
  }

  /** An element before `<sheetData>` (the worklist reader reads `<dimension>`). */
  protected beforeSheetData(_name: string, _attributes: Record<string, string>): void {}
  /** A `<row>` opens, with its `r` attribute. */
  protected abstract startRow(r: string | undefined): void;
  /** A `<c>` opens (its attributes are in cellRef, cellType, cellStyle). */
  protected startCell(): void {}
  protected abstract endRow(): void;
  /** A `<c>` closes: value, inlineText, formula and sharedFormula hold what it said. */
  protected abstract endCell(): void;
}
