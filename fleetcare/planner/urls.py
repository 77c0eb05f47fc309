app_name = "planner"
urlpatterns = []
