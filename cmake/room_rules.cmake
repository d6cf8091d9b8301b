# Which rooms (folders of src/) each room may include. Dependencies run one way: a room includes
# only rooms listed for it, so an upward include fails the build (cmake/check_room_includes.cmake)
# before a single file is compiled. docs/architecture.md draws the same picture.
set(HABCAST_ROOMS
  core/base core/numeric core/model core/domain core/prediction core/niche core/stats
  raster render pipeline predict fit evaluate batch cli)
set(HABCAST_CORE_ROOMS core/base core/numeric core/model core/domain core/prediction core/niche core/stats)

set(HABCAST_ALLOWED_core/base       core/base)
set(HABCAST_ALLOWED_core/numeric    core/base core/numeric)
set(HABCAST_ALLOWED_core/model      core/base core/numeric core/model)
set(HABCAST_ALLOWED_core/domain     core/base core/numeric core/model core/domain)
set(HABCAST_ALLOWED_core/prediction core/base core/numeric core/model core/domain core/prediction)
set(HABCAST_ALLOWED_core/niche      core/base core/numeric core/model core/domain core/niche)
set(HABCAST_ALLOWED_core/stats      core/base core/numeric core/model core/stats)
set(HABCAST_ALLOWED_raster          ${HABCAST_CORE_ROOMS} raster)
set(HABCAST_ALLOWED_render          ${HABCAST_CORE_ROOMS} raster render)
set(HABCAST_ALLOWED_pipeline        ${HABCAST_CORE_ROOMS} raster pipeline)
set(HABCAST_ALLOWED_predict         ${HABCAST_CORE_ROOMS} raster render pipeline predict)
set(HABCAST_ALLOWED_fit             ${HABCAST_CORE_ROOMS} raster pipeline fit)
set(HABCAST_ALLOWED_evaluate        ${HABCAST_CORE_ROOMS} raster render pipeline evaluate)
set(HABCAST_ALLOWED_batch           ${HABCAST_CORE_ROOMS} raster render pipeline predict batch)
set(HABCAST_ALLOWED_cli             ${HABCAST_ROOMS})
