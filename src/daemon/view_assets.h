/*
 * view_assets: the page's files (src/daemon/view_page/), built into the
 * binary by cmake/EmbedFiles.cmake, so the page needs nothing installed
 * beside latticed and loads nothing from elsewhere.
 */
#ifndef LATTICED_VIEW_ASSETS_H
#define LATTICED_VIEW_ASSETS_H

#include <stddef.h>

extern const unsigned char view_asset_index_html[];
extern const size_t view_asset_index_html_length;
extern const unsigned char view_asset_view_js[];
extern const size_t view_asset_view_js_length;
extern const unsigned char view_asset_view_css[];
extern const size_t view_asset_view_css_length;

#endif
