app_name = "budget"
urlpatterns = []
