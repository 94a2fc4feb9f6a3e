//! The page's window onto spreadsheet files: the sheets of an `.xlsx` or
//! `.ods` file, and one sheet as table text, read by the core's
//! `read::sheets` (the same reader the command line uses), so a sheet
//! opened in the page gives the same table, line for line, as the same
//! sheet given to `turnover --sheet`.

use crate::to_js;
use turnover_core::read::sheets::{sheet_names, sheet_text};
use wasm_bindgen::prelude::*;

/// The names of the workbook's sheets, in order, as an array of strings.
/// `bytes` is the whole file (a `Uint8Array`). A file that is not a
/// workbook Turnover reads (`.xls`, `.xlsb`, password-protected, damaged)
/// is an exception whose message says what to do instead.
#[wasm_bindgen(js_name = sheetNames)]
pub fn sheet_names_js(bytes: &[u8]) -> Result<JsValue, JsError> {
    let names = sheet_names(bytes).map_err(|e| JsError::new(&e.message))?;
    to_js(&names)
}

/// The sheet `name` of the workbook as table text: tab-separated, line N
/// is row N of the sheet, so the table reader's problems name the sheet's
/// rows. The notes (first used column, dates written as day numbers) are
/// in `sheetRead`.
#[wasm_bindgen(js_name = sheetText)]
pub fn sheet_text_js(bytes: &[u8], name: &str) -> Result<String, JsError> {
    Ok(sheet_text(bytes, name).map_err(|e| JsError::new(&e.message))?.text)
}

/// The sheet `name` as `{text, notes}`: the text of `sheetText` and the
/// notes the page shows beside it (nothing is changed silently: a sheet
/// that starts in column C, or dates written as day numbers, are said).
#[wasm_bindgen(js_name = sheetRead)]
pub fn sheet_read_js(bytes: &[u8], name: &str) -> Result<JsValue, JsError> {
    to_js(&sheet_text(bytes, name).map_err(|e| JsError::new(&e.message))?)
}
